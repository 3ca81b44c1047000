"""Tests of dsp.spectrum against Harris 1978, Parseval, scipy.signal and unit definitions."""

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
import scipy.signal

from dsp.errors import AnalysisError
from dsp.spectrum import (
    WINDOWS,
    amplitude_spectrum,
    band_rms,
    band_spectrum,
    band_spectrum_from_rfft,
    integrate_spectrum,
    power_spectral_density,
    rfft_full,
    spectrum_from_rfft,
    to_cpm,
    to_orders,
    velocity_spectrum,
    window_properties,
    window_values,
    zoom_spectrum,
)

FS = 1000.0
N = 1000


def tone(f0_hz, amp=2.0, n=N, fs=FS, dtype=np.float64):
    t = np.arange(n) / fs
    return (amp * np.sin(2 * np.pi * f0_hz * t)).astype(dtype)


@pytest.mark.parametrize("name", list(WINDOWS))
def test_windows_equal_scipy_periodic_windows(name):
    ref = "boxcar" if name == "rectangular" else name
    # scipy.signal.windows as reference implementation (sym=False, periodic)
    np.testing.assert_allclose(window_values(name, 1000), scipy.signal.get_window(ref, 1000, fftbins=True), atol=1e-12)


# (coherent gain, ENBW bins, scalloping loss dB): Harris 1978, Table I
HARRIS = {
    "rectangular": (1.00, 1.00, 3.92),
    "hann": (0.50, 1.50, 1.42),
    "hamming": (0.54, 1.36, 1.78),
    "blackman": (0.42, 1.73, 1.10),
    "blackmanharris": (0.36, 2.00, 0.83),
}


@pytest.mark.parametrize("name", list(HARRIS))
def test_window_properties_match_harris_table(name):
    cg, enbw, sl = HARRIS[name]
    info = window_properties(name, 4096)
    assert info.coherent_gain == pytest.approx(cg, abs=0.006)  # Harris 1978, Table I (2 decimals)
    assert info.enbw_bins == pytest.approx(enbw, abs=0.006)  # Harris 1978, Table I
    # Harris 1978, Table I; his Hamming entry (1.78) differs by 0.03 dB from the exact periodic window
    assert info.scalloping_loss_db == pytest.approx(sl, abs=0.035)
    assert info.processing_loss_db == pytest.approx(info.scalloping_loss_db + 10 * np.log10(info.enbw_bins), abs=1e-12)


@pytest.mark.parametrize("name", list(HARRIS))
def test_tone_readings_follow_coherent_gain_and_scalloping_loss(name):
    cg, _, sl = HARRIS[name]
    w = window_values(name, N)
    X = np.fft.rfft(tone(100.0) * w)
    # Harris 1978, Table I: an on-bin tone of amplitude A gives |X| = A N CG / 2
    assert 2 * abs(X[100]) / N == pytest.approx(2.0 * cg, abs=2.0 * 0.006)
    worst = amplitude_spectrum(tone(100.5), FS, window=name, detrend=False).amplitude.max()
    # Harris 1978, Table I scalloping loss; Hamming's table value is 0.03 dB above the exact
    # periodic window, and the real tone's negative-frequency image moves readings by ~0.02 dB
    assert 20 * np.log10(2.0 / worst) == pytest.approx(sl, abs=0.05)


def test_flattop_properties():
    info = window_properties("flattop", 4096)
    # domain-reference section 7, computed for scipy's flat-top (D'Antona & Ferrero 2006 coefficients)
    assert info.coherent_gain == pytest.approx(0.2156, abs=1e-4)
    assert info.enbw_bins == pytest.approx(3.770, abs=1e-3)
    assert info.scalloping_loss_db == pytest.approx(0.010, abs=0.005)


@pytest.mark.parametrize("name", list(WINDOWS))
def test_on_bin_tone_reads_its_amplitude(name):
    s = amplitude_spectrum(tone(100.0), FS, window=name)
    k = int(np.argmin(np.abs(s.freq_hz - 100.0)))
    assert s.amplitude[k] == pytest.approx(2.0, rel=1e-9)  # Harris 1978: amplitude scaling by sum(w); domain-reference 7
    r = amplitude_spectrum(tone(100.0), FS, window=name, scaling="rms")
    assert r.amplitude[k] == pytest.approx(np.sqrt(2.0), rel=1e-9)  # A/sqrt(2), definition of RMS


@pytest.mark.parametrize("name,expected", [("rectangular", 1.27598), ("hann", 1.69765), ("flattop", 1.99776)])
def test_half_bin_tone_shows_scalloping_loss(name, expected):
    s = amplitude_spectrum(tone(100.5), FS, window=name, detrend=False)
    peak = float(s.amplitude.max())
    assert peak == pytest.approx(expected, rel=2e-5)  # domain-reference section 7 check values
    # Harris 1978 Table I scalloping loss (3.92 / 1.42 dB; flat-top 0.010 dB); the real tone's
    # negative-frequency image moves the rectangular reading by ~0.02 dB at N = 1000
    sl = window_properties(name, N).scalloping_loss_db
    assert 20 * np.log10(2.0 / peak) == pytest.approx(sl, abs=0.025)


def test_parseval_full_rfft_and_rectangular_band_rms():
    x = np.random.default_rng(1).standard_normal(4096)
    full = rfft_full(x, FS)
    X = full.X
    two_sided = (abs(X[0]) ** 2 + 2 * np.sum(abs(X[1:-1]) ** 2) + abs(X[-1]) ** 2) / x.size
    assert two_sided == pytest.approx(np.sum(x**2), rel=1e-12)  # Parseval's theorem
    s = amplitude_spectrum(x, FS, window="rectangular", detrend=False, scaling="rms")
    assert band_rms(s, 0, FS / 2) == pytest.approx(np.sqrt(np.mean(x**2)), rel=1e-12)  # Parseval's theorem
    p = amplitude_spectrum(x, FS, window="rectangular", detrend=False, scaling="peak")
    assert band_rms(p, 0, FS / 2) == pytest.approx(np.sqrt(np.mean(x**2)), rel=1e-12)  # Parseval's theorem


def test_hann_band_rms_of_a_tone():
    s = amplitude_spectrum(tone(100.0), FS, window="hann")
    assert s.enbw_hz == pytest.approx(1.5, rel=1e-12)  # Harris 1978, Table I: Hann ENBW 1.5 bins
    assert band_rms(s, 99.0, 101.0) == pytest.approx(np.sqrt(2.0), rel=1e-9)  # domain-reference 7: sqrt(3.0/1.5)


def test_hann_psd_integrates_to_the_tone_power():
    s = amplitude_spectrum(tone(100.0), FS, window="hann")
    g = power_spectral_density(s)
    assert np.sum(g) * s.resolution_hz == pytest.approx(2.0, rel=1e-9)  # A^2/2, domain-reference 7
    f_ref, g_ref = scipy.signal.welch(tone(100.0), FS, window="hann", nperseg=N, scaling="density")
    np.testing.assert_allclose(g, g_ref, rtol=1e-9, atol=1e-15)  # scipy.signal.welch as reference


@pytest.mark.parametrize("detrend", ["constant", "linear", False])
@pytest.mark.parametrize("window", ["hann", "flattop", "blackmanharris"])
def test_averaged_spectrum_matches_welch(window, detrend):
    rng = np.random.default_rng(7)
    x = rng.standard_normal(10_000) + 0.5 * tone(123.0, n=10_000) + 0.3
    s = amplitude_spectrum(x, FS, window=window, nperseg=1024, noverlap=700, detrend=detrend, scaling="rms")
    f_ref, p_ref = scipy.signal.welch(
        x, FS, window=window, nperseg=1024, noverlap=700, detrend=detrend, scaling="spectrum"
    )
    assert s.n_averages == 1 + (10_000 - 1024) // (1024 - 700)  # Welch 1967 segment count
    np.testing.assert_allclose(s.freq_hz, f_ref, rtol=1e-12)
    np.testing.assert_allclose(s.amplitude**2, p_ref, rtol=1e-9, atol=1e-18)  # scipy.signal.welch as reference


def test_peak_hold_is_not_below_mean():
    x = np.random.default_rng(3).standard_normal(8192)
    mean = amplitude_spectrum(x, FS, nperseg=512)
    hold = amplitude_spectrum(x, FS, nperseg=512, average="max")
    assert np.all(hold.amplitude >= mean.amplitude * (1 - 1e-12))  # max >= RMS mean, common practice, no source
    assert hold.average == "max"


@pytest.mark.parametrize("window", list(WINDOWS))
def test_spectrum_from_rfft_equals_windowed_fft(window):
    rng = np.random.default_rng(11)
    n = 4001  # odd length too
    x = rng.standard_normal(n) + tone(37.3, n=n)
    ref_name = "boxcar" if window == "rectangular" else window
    w = scipy.signal.get_window(ref_name, n, fftbins=True)
    direct = np.abs(np.fft.rfft(x * w)) * 2 / w.sum()
    direct[0] /= 2
    got = spectrum_from_rfft(rfft_full(x, FS), window=window)
    # numpy.fft of the windowed signal as reference
    np.testing.assert_allclose(got.amplitude, direct, rtol=1e-6, atol=1e-6 * direct.max())
    plain = amplitude_spectrum(x, FS, window=window, detrend=False)
    np.testing.assert_allclose(got.amplitude, plain.amplitude, rtol=1e-6, atol=1e-9)


def test_float32_in_float32_out():
    x = tone(100.0, dtype=np.float32)
    assert amplitude_spectrum(x, FS).amplitude.dtype == np.float32  # scipy.signal convention
    assert amplitude_spectrum(x, FS, nperseg=256).amplitude.dtype == np.float32
    full = rfft_full(x, FS)
    assert full.X.dtype == np.complex64
    s = spectrum_from_rfft(full, window="flattop")
    assert s.amplitude.dtype == np.float32
    assert s.amplitude.max() == pytest.approx(2.0, rel=1e-5)  # domain-reference 7, flat-top reads A


def test_inputs_are_not_modified_and_results_read_only():
    x = np.random.default_rng(5).standard_normal(2048)
    copy = x.copy()
    s = amplitude_spectrum(x, FS, nperseg=256, detrend="linear")
    np.testing.assert_array_equal(x, copy)
    with pytest.raises(ValueError):
        s.amplitude[0] = 1.0


def test_zoom_band_equals_full_resolution_lines():
    rng = np.random.default_rng(2)
    fs, n = 2000.0, 20_000
    t = np.arange(n) / fs
    x = np.cos(2 * np.pi * 400.0 * t) + 0.2 * np.cos(2 * np.pi * 400.3 * t) + 0.01 * rng.standard_normal(n)
    z = zoom_spectrum(x, fs, 400.0, 2.0)
    assert z.resolution_hz == pytest.approx(0.1)  # fs/n
    assert z.freq_hz[0] <= 399.0 and z.freq_hz[-1] >= 401.0
    full = spectrum_from_rfft(rfft_full(x, fs))
    k0 = int(round(z.freq_hz[0] / 0.1))
    np.testing.assert_allclose(z.amplitude, full.amplitude[k0:k0 + z.freq_hz.size], rtol=1e-12)
    # both tones resolved and read on bin: Harris 1978 (Hann reads A for on-bin tones)
    assert z.amplitude[np.argmin(abs(z.freq_hz - 400.0))] == pytest.approx(1.0, abs=0.01)
    assert z.amplitude[np.argmin(abs(z.freq_hz - 400.3))] == pytest.approx(0.2, abs=0.01)
    z2 = zoom_spectrum(rfft_full(x, fs), None, 400.0, 2.0)
    np.testing.assert_array_equal(z.amplitude, z2.amplitude)


def test_integration_of_one_g_at_100_hz():
    f = np.array([0.0, 1.0, 10.0, 100.0, 1000.0])
    a = np.ones(5)
    v = integrate_spectrum(f, a, units="g", to="velocity", cutoff_hz=2.0)
    d = integrate_spectrum(f, a, units="g", to="displacement", cutoff_hz=2.0)
    assert v[3] == pytest.approx(15.6078, rel=1e-4)  # domain-reference 8 (g_n = 9.80665 exact, CGPM 1901)
    assert v[2] == pytest.approx(156.078, rel=1e-4)  # domain-reference 8
    assert v[4] == pytest.approx(1.56078, rel=1e-4)  # domain-reference 8
    assert d[3] == pytest.approx(24.8405, rel=1e-4)  # domain-reference 8
    assert v[0] == 0 and v[1] == 0 and d[1] == 0  # below cutoff: common practice, no source
    v_si = integrate_spectrum(f, a * 9.80665, units="m/s2")
    np.testing.assert_allclose(v_si, v, rtol=1e-12)


def test_velocity_spectrum_of_acceleration_tone():
    x = tone(100.0, amp=1.0)
    s = amplitude_spectrum(x, FS, scaling="rms")
    v = velocity_spectrum(s, units="g")
    assert v.units == "mm/s"
    assert band_rms(v, 90, 110) == pytest.approx(11.0364, rel=1e-4)  # domain-reference 8: 1 g pk at 100 Hz -> 11.0364 mm/s RMS


def test_axis_helpers():
    assert to_cpm(50.0) == 3000.0  # common practice, no source: CPM = Hz x 60
    np.testing.assert_allclose(to_orders([25.0, 100.0], 25.0), [1.0, 4.0])


def test_validation_messages_name_the_value():
    x = np.zeros(100)
    with pytest.raises(AnalysisError, match="nperseg=0"):
        amplitude_spectrum(x, FS, nperseg=0)
    with pytest.raises(AnalysisError, match="noverlap=64"):
        amplitude_spectrum(x, FS, nperseg=64, noverlap=64)
    with pytest.raises(AnalysisError, match="'window'"):
        amplitude_spectrum(x, FS, window="kaiser")
    with pytest.raises(AnalysisError, match="fs="):
        amplitude_spectrum(x, 0.0)
    with pytest.raises(AnalysisError, match="non-finite"):
        amplitude_spectrum(np.array([1.0, np.nan, 2.0]), FS)


@pytest.mark.parametrize("n", [1000, 1001])
@pytest.mark.parametrize("scaling", ["peak", "rms"])
def test_spectrum_from_rfft_scaling_and_edges(n, scaling):
    rng = np.random.default_rng(n)
    x = rng.standard_normal(n) + 0.7 + 0.3 * np.cos(np.pi * np.arange(n))  # DC and Nyquist content
    full = rfft_full(x, FS)
    for window in ("hann", "flattop", "rectangular"):
        got = spectrum_from_rfft(full, window=window, scaling=scaling)
        ref = amplitude_spectrum(x, FS, window=window, detrend=False, scaling=scaling)
        np.testing.assert_allclose(got.amplitude, ref.amplitude, rtol=1e-9, atol=1e-12)
        assert got.enbw_hz == pytest.approx(ref.enbw_hz, rel=1e-12)  # Harris 1978 ENBW, closed form vs sum
        # zoom bands touching DC and Nyquist are slices of the same lines
        for center in (0.0, FS / 2):
            z = zoom_spectrum(full, None, center, 20.0, window=window, scaling=scaling)
            k0 = int(round(z.freq_hz[0] / z.resolution_hz))
            np.testing.assert_allclose(z.amplitude, got.amplitude[k0:k0 + z.amplitude.size], rtol=1e-12)


def test_band_spectrum_from_rfft_tone_and_noise_levels():
    fs, n = 1000.0, 100_000  # 0.01 Hz lines
    rng = np.random.default_rng(17)
    t = np.arange(n) / fs
    noise = rng.standard_normal(n)
    x = noise + 3.0 * np.sin(2 * np.pi * 123.4567 * t)
    full = rfft_full(x, fs)
    b = band_spectrum_from_rfft(full, 0.5)
    assert b.resolution_hz == pytest.approx(0.5) and b.enbw_bins == pytest.approx(1.0)
    k = int(np.argmin(np.abs(b.freq_hz - 123.5)))
    # a tone inside one band reads its amplitude, no scalloping (Parseval within the band)
    assert b.amplitude[k] == pytest.approx(3.0, rel=0.01)
    # whole-band power equals the signal power (Parseval; Hann window power normalised by its ENBW)
    assert band_rms(b, 0, fs / 2) == pytest.approx(np.sqrt(np.mean((x - x.mean()) ** 2)), rel=0.02)
    # noise lines read ENBW (1.5 bins for Hann, Harris 1978 Table I) below a Welch spectrum of equal resolution
    welch = amplitude_spectrum(noise, fs, nperseg=2000, scaling="rms")
    band_noise = band_spectrum_from_rfft(rfft_full(noise, fs), 0.5, scaling="rms")
    sel = (welch.freq_hz > 10) & (welch.freq_hz < 490)
    ratio = np.mean(welch.amplitude[sel] ** 2) / np.mean(band_noise.amplitude[1:-1][sel[1:-1]] ** 2)
    assert ratio == pytest.approx(1.5, rel=0.05)  # Harris 1978, Table I: Hann ENBW = 1.5 bins


@settings(max_examples=60, deadline=None)
@given(n=st.integers(min_value=2, max_value=80), window=st.sampled_from(sorted(WINDOWS)), seed=st.integers(0, 2**16))
def test_spectrum_from_rfft_any_length(n, window, seed):
    x = np.random.default_rng(seed).standard_normal(n)
    w = scipy.signal.get_window("boxcar" if window == "rectangular" else window, n, fftbins=True)
    assume(w.sum() > 1e-9 * n)
    direct = np.abs(np.fft.rfft(x * w)) * 2 / w.sum()
    direct[0] /= 2
    if n % 2 == 0:
        direct[-1] /= 2
    got = spectrum_from_rfft(rfft_full(x, FS), window=window)
    # numpy.fft of the windowed signal as reference, short records included (window terms alias)
    np.testing.assert_allclose(got.amplitude, direct, rtol=1e-9, atol=1e-12 * max(direct.max(), 1.0))


def test_full_length_steps_across_blocks_match_numpy():
    """Records longer than the block size of the full-length steps (several blocks and a partial one)."""
    fs, n = 1000.0, 300_001                                # odd: no Nyquist line
    rng = np.random.default_rng(23)
    t = np.arange(n) / fs
    x = (rng.standard_normal(n) + 2.0 * np.sin(2 * np.pi * 77.7 * t)).astype(np.float32)
    full = rfft_full(x, fs)
    ref = np.fft.rfft(x.astype(np.float64))
    # numpy as the reference implementation of the rfft (float32 transform: rounding only)
    assert np.max(np.abs(full.X - ref)) < 1e-5 * np.max(np.abs(ref))
    rect = spectrum_from_rfft(full, window="rectangular", scaling="rms")
    # Parseval's theorem (Heinzel et al. 2002, section 10): rectangular band RMS of every line = signal RMS
    assert band_rms(rect, 0.0, fs / 2) == pytest.approx(np.sqrt(np.mean(x.astype(np.float64) ** 2)), rel=1e-5)
    hann = spectrum_from_rfft(full, window="hann")
    xw = x.astype(np.float64) * window_values("hann", n)
    # numpy rfft of the windowed record as the reference (Harris 1978: peak scaling 2|X|/sum w)
    np.testing.assert_allclose(hann.amplitude[1:], 2 * np.abs(np.fft.rfft(xw))[1:] / (0.5 * n), rtol=2e-3, atol=2e-6)
    vel = velocity_spectrum(hann, units="g", cutoff_hz=2.0)
    f = hann.freq_hz
    keep = f >= 2.0
    # v = a / (2 pi f), 1 g = 9.80665 m/s^2 (CGPM 1901), in mm/s
    np.testing.assert_allclose(vel.amplitude[keep], hann.amplitude[keep] * 9.80665e3 / (2 * np.pi * f[keep]), rtol=1e-6)
    assert np.all(vel.amplitude[~keep] == 0)


def test_band_spectrum_of_a_spectrum_equals_the_one_from_the_rfft():
    fs, n = 1000.0, 300_000                                # 150 001 lines: several blocks
    rng = np.random.default_rng(29)
    t = np.arange(n) / fs
    x = rng.standard_normal(n) + 3.0 * np.sin(2 * np.pi * 123.4567 * t)
    full = rfft_full(x, fs)
    for res, scaling in ((0.5, "peak"), (0.1, "rms"), (7.0, "peak")):
        b = band_spectrum(spectrum_from_rfft(full, scaling=scaling), res)
        ref = band_spectrum_from_rfft(full, res, scaling=scaling)
        np.testing.assert_allclose(b.freq_hz, ref.freq_hz, rtol=1e-12)
        np.testing.assert_allclose(b.amplitude, ref.amplitude, rtol=1e-9, atol=1e-12)   # common practice, no source
        # Parseval with the window's ENBW (Heinzel et al. 2002): all lines hold the record's power
        assert band_rms(b, 0, fs / 2) == pytest.approx(np.std(x), rel=0.02)
    k = int(np.argmin(np.abs(b.freq_hz - 126.0)))          # 7 Hz lines: the tone lies inside line 18
    # Daniell averaging: a tone inside one band reads its amplitude (Parseval within the band)
    assert b.amplitude[k] == pytest.approx(3.0, rel=0.01)
    with pytest.raises(AnalysisError, match="single-segment"):
        band_spectrum(band_spectrum_from_rfft(full, 0.5), 1.0)
