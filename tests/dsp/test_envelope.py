"""Tests of dsp.envelope against scipy.signal.hilbert, Randall & Antoni 2011 and Antoni 2006/2007."""

import numpy as np
import pytest
import scipy.signal

from dsp.envelope import (
    analytic_band_from_rfft,
    envelope,
    envelope_spectrum,
    fast_kurtogram,
    kurtogram_map,
    spectral_kurtosis,
)
from dsp.errors import AnalysisError
from dsp.spectrum import rfft_full

FS = 20_000.0


def am_signal(n=20_000, fs=FS):
    t = np.arange(n) / fs
    return (1 + 0.5 * np.cos(2 * np.pi * 100 * t)) * np.cos(2 * np.pi * 3000 * t)


def test_envelope_equals_scipy_hilbert_without_decimation():
    x = am_signal()
    env = envelope(x, FS, (2500.0, 3500.0), decimate=False)
    # scipy.signal.hilbert as reference implementation (signal lies wholly in the band)
    assert np.max(np.abs(env.values - np.abs(scipy.signal.hilbert(x)))) < 1e-9
    assert env.sample_rate_hz == FS


def test_decimated_envelope_is_the_modulation():
    x = am_signal()
    env = envelope(x, FS, (2500.0, 3500.0))
    assert env.sample_rate_hz < FS / 4  # automatic decimation (Randall & Antoni 2011, "Hilbert" method)
    expected = 1 + 0.5 * np.cos(2 * np.pi * 100 * env.time_s)
    assert np.max(np.abs(env.values - expected)) < 1e-9  # domain-reference 5.1: max|e - (1 + 0.5cos)| < 1e-9


def test_envelope_and_squared_envelope_spectra():
    x = am_signal()
    full = rfft_full(x, FS)
    es = envelope_spectrum(full, None, (2500.0, 3500.0), squared=False)
    ses = envelope_spectrum(full, None, (2500.0, 3500.0))

    def at(spec, f_hz):
        return spec.amplitude[int(np.argmin(np.abs(spec.freq_hz - f_hz)))]

    # domain-reference 5.1 check values, derived from scipy.signal.hilbert
    assert at(es, 0) == pytest.approx(1.0, abs=1e-9)
    assert at(es, 100) == pytest.approx(0.5, abs=1e-9)
    assert at(es, 200) == pytest.approx(0.0, abs=1e-9)
    # SES: e^2 = 1 + m^2/2 + 2m cos + (m^2/2) cos 2w (Randall & Antoni 2011; domain-reference 5.1)
    assert at(ses, 0) == pytest.approx(1.125, abs=1e-9)
    assert at(ses, 100) == pytest.approx(1.0, abs=1e-9)
    assert at(ses, 200) == pytest.approx(0.125, abs=1e-9)
    assert ses.squared and not es.squared and ses.band_source == "user"
    # same result from the plain signal
    np.testing.assert_allclose(envelope_spectrum(x, FS, (2500.0, 3500.0)).amplitude, ses.amplitude, atol=1e-12)
    # scipy reference for the SES at 100 Hz: spectrum of |hilbert(x)|^2
    e2 = np.abs(scipy.signal.hilbert(x)) ** 2
    ref = 2 * np.abs(np.fft.rfft(e2)) / e2.size
    assert at(ses, 100) == pytest.approx(ref[100], abs=1e-9)


def test_analytic_band_float32_and_validation():
    x = am_signal().astype(np.float32)
    band = analytic_band_from_rfft(rfft_full(x, FS), (2500.0, 3500.0))
    assert band.values.dtype == np.complex64
    assert band.band_hz == (2500.0, 3500.0)
    with pytest.raises(AnalysisError, match="band_hz"):
        envelope(x, FS, (3500.0, 2500.0))
    with pytest.raises(AnalysisError, match="band_hz"):
        envelope(x, FS, (1000.0, 20_000.0))


def test_spectral_kurtosis_of_noise_and_tone():
    rng = np.random.default_rng(2006)
    g = rng.standard_normal(2**18)
    sk = spectral_kurtosis(g, FS, nperseg=256)  # Hann, 75 % overlap by default
    assert sk.noverlap == 192
    assert abs(np.mean(sk.kurtosis[1:-1])) < 0.05  # Antoni 2006: Gaussian noise gives 0; domain-reference 5.2
    n = np.arange(2**18)
    tone = np.cos(2 * np.pi * 0.1234 * n)
    k = spectral_kurtosis(tone, FS, nperseg=256).kurtosis[round(0.1234 * 256)]
    assert k == pytest.approx(-1.0, abs=1e-3)  # Antoni 2006: constant-amplitude sinusoid gives -1; domain-reference 5.2


def test_spectral_kurtosis_matches_scipy_stft():
    x = np.random.default_rng(5).standard_normal(8192)
    sk = spectral_kurtosis(x, FS, nperseg=128, noverlap=64)
    # scipy.signal.stft as reference for the STFT; the estimator is Antoni 2006 eq. for K(f)
    _, _, Z = scipy.signal.stft(x, FS, window="hann", nperseg=128, noverlap=64, boundary=None, padded=False,
                                detrend=False)
    p = np.abs(Z) ** 2
    ref = np.mean(p**2, axis=1) / np.mean(p, axis=1) ** 2 - 2
    np.testing.assert_allclose(sk.kurtosis, ref, rtol=1e-9, atol=1e-12)


def test_kurtogram_band_geometry():
    x = np.random.default_rng(1).standard_normal(2**14)
    kg = fast_kurtogram(x, FS, max_level=4)
    # Antoni 2007: levels 0, 1, 1.6, 2, 2.6, ...; domain-reference 5.3
    np.testing.assert_allclose(kg.levels, [0, 1, 1 + np.log2(3) - 1, 2, 2 + np.log2(3) - 1, 3, 3 + np.log2(3) - 1, 4])
    widths = {round(lv, 1): np.diff(e)[0] for lv, e in zip(kg.levels, kg.band_edges_hz)}
    counts = {round(lv, 1): e.size - 1 for lv, e in zip(kg.levels, kg.band_edges_hz)}
    # domain-reference 5.3 check (Fs = 20 kHz)
    assert counts[1.0] == 2 and widths[1.0] == pytest.approx(5000.0)
    assert counts[1.6] == 3 and widths[1.6] == pytest.approx(3333.333, rel=1e-6)
    assert counts[2.0] == 4 and widths[2.0] == pytest.approx(2500.0)
    assert counts[2.6] == 6 and widths[2.6] == pytest.approx(1666.667, rel=1e-6)
    assert counts[3.0] == 8 and widths[3.0] == pytest.approx(1250.0)
    level3 = kg.band_edges_hz[kg.levels.index(3.0)]
    assert (level3[2], level3[3]) == (2500.0, 3750.0)  # domain-reference 5.3: band 2 of level 3
    assert all(k.size == e.size - 1 for k, e in zip(kg.kurtosis, kg.band_edges_hz))
    # Antoni 2007: Gaussian noise gives kurtosis near 0 in every band (estimator spread ~ sqrt(4/n_band))
    assert max(np.max(np.abs(k)) for k in kg.kurtosis) < 0.3
    grid, edges, labels = kurtogram_map(kg)
    assert grid.shape == (8, 48) and edges[-1] == FS / 2
    assert labels[:5] == ["0", "1", "1.6", "2", "2.6"]


def impulsive_signal(seed, n=2**16, fs=FS, fault_hz=37.0, noise=0.5):
    """Decaying 3.5 kHz resonance struck at ~37 Hz (slight jitter), a 1 kHz tone, Gaussian noise."""
    rng = np.random.default_rng(seed)
    tau = np.arange(int(0.01 * fs)) / fs
    ring = np.exp(-1100 * tau) * np.sin(2 * np.pi * 3500 * tau)  # ~5 % damping
    hits = np.zeros(n)
    times = np.arange(0.01, n / fs - 0.01, 1 / fault_hz)
    hits[(times * fs + rng.uniform(-2, 2, times.size)).astype(int)] = 1.0
    t = np.arange(n) / fs
    x = np.convolve(hits, ring)[:n] + noise * rng.standard_normal(n) + 0.5 * np.cos(2 * np.pi * 1000 * t)
    return x, np.convolve(hits, ring)[:n]


def test_kurtogram_finds_the_impulsive_band():
    x, clean = impulsive_signal(seed=4)
    assert np.std(clean) < 0.2 * 0.5  # impacts buried: their RMS is under a fifth of the noise RMS
    kg = fast_kurtogram(x, FS)
    lo, hi = kg.best_band_hz
    # Antoni 2007 / Randall & Antoni 2011: the kurtogram picks the resonance band excited by the impacts
    assert lo < 3500.0 < hi and hi - lo <= 2500.0
    assert kg.best_kurtosis > 0.3
    ses = envelope_spectrum(x, FS, kg.best_band_hz, band_source="kurtogram", max_freq_hz=300.0)
    f, a = ses.freq_hz, ses.amplitude
    k37 = int(np.argmin(np.abs(f - 37.0)))
    line = a[k37 - 1:k37 + 2].max()
    floor = np.median(a[(f > 5) & (f < 300)])
    assert line > 5 * floor  # Randall & Antoni 2011: SES shows the impact rate; common practice threshold, no source
    assert ses.band_source == "kurtogram" and f[-1] <= 300.0


def test_kurtogram_limits_level_and_length():
    x = np.random.default_rng(0).standard_normal(5000)
    kg = fast_kurtogram(x, FS, max_level=9)
    assert kg.max_level == int(np.log2(5000)) - 7  # level cap, domain-reference 5.3 (about log2(N) - 7)
    assert kg.n_samples % (3 * 2**kg.max_level) == 0
    long = np.random.default_rng(0).standard_normal(40_000)
    kg2 = fast_kurtogram(long, FS, max_level=3, max_samples=10_000)
    assert kg2.n_samples <= 10_000 and kg2.t_start_s > 0
    with pytest.raises(AnalysisError, match="max_level"):
        fast_kurtogram(long, FS, max_level=0)


def test_kurtogram_band_holding_a_tone_reads_minus_one():
    rng = np.random.default_rng(8)
    n = 2**15
    t = np.arange(n) / FS
    x = 10.0 * np.cos(2 * np.pi * 4321.0 * t) + 0.1 * rng.standard_normal(n)
    kg = fast_kurtogram(x, FS, max_level=4)
    row = kg.kurtosis[kg.levels.index(3.0)]
    band = int(4321.0 // 1250.0)  # level 3 band [3750, 5000] Hz
    # Antoni 2006/2007: a constant-amplitude sinusoid has spectral kurtosis -1
    assert row[band] == pytest.approx(-1.0, abs=0.01)
    assert kg.best_kurtosis < 0.3  # nothing impulsive here


def test_envelope_spectrum_options_are_checked():
    x = am_signal()
    with pytest.raises(AnalysisError, match="band_source"):
        envelope_spectrum(x, FS, (2500.0, 3500.0), band_source="auto")
    with pytest.raises(AnalysisError, match="fs"):
        envelope_spectrum(x, None, (2500.0, 3500.0))


@pytest.mark.parametrize("fc_hz", [2900.0, 5400.0, 7500.0])
def test_kurtogram_band_bookkeeping_at_every_level(fc_hz):
    # Random impacts on a resonance: at EVERY level the band of largest kurtosis must be the one
    # holding the resonance (Antoni 2007: SK is largest where the transients' energy lies); this
    # checks the order of the bands after the binary and three-way splits.
    rng = np.random.default_rng(1)
    n = 2**16
    tau = np.arange(200) / FS
    ring = np.exp(-600 * tau) * np.sin(2 * np.pi * fc_hz * tau)
    hits = np.zeros(n)
    hits[rng.integers(0, n, 150)] = 1.0
    x = np.convolve(hits, ring)[:n] + 0.3 * rng.standard_normal(n)
    kg = fast_kurtogram(x, FS, max_level=5)
    for level, row, edges in zip(kg.levels, kg.kurtosis, kg.band_edges_hz):
        j = int(np.argmax(row))
        assert edges[j] <= fc_hz <= edges[j + 1], f"level {level:.1f}"


def test_smooth_floor_is_the_largest_5_smooth_length():
    from dsp.envelope import smooth_floor

    def brute(n):  # definition of a 5-smooth (regular) number, checked by trial division
        best = 1
        for m in range(1, n + 1):
            k = m
            for p in (2, 3, 5):
                while k % p == 0:
                    k //= p
            if k == 1:
                best = m
        return best

    # common practice, no source: FFT lengths with factors 2, 3 and 5 only are fast
    assert [smooth_floor(n) for n in range(1, 400)] == [brute(n) for n in range(1, 400)]
