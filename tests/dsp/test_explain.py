"""Tests of dsp.explain: tolerance, spacing ownership, peak explanation, reading spectrum arrays."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from dsp.errors import AnalysisError
from dsp.explain import (NO_MATCH, amplitude_at, axis_scale, band_peak_amplitude, best_text, bin_index,
                         explain_peak, match_spacing, model_lines, nearest_peak, speed_spread_frac, tolerance_hz)
from dsp.kinematics import frequency_table
from dsp.model import load_model

DATA = Path(__file__).resolve().parents[1] / "data"
DEMO = Path(__file__).resolve().parents[2] / "demo_recordings"


@pytest.fixture(scope="module")
def pair():
    # 40T gear on a 3000 rpm input shaft drives a 15T pinion; bearing with the CWRU 6205 geometry on the output
    return frequency_table(load_model(DATA / "pair_40_15.toml"), 50.0)


@pytest.fixture(scope="module")
def planetary():
    return frequency_table(load_model(DEMO / "03_broken_tooth.toml"), 1485.0 / 60.0)


# --------------------------------------------------------------------------- tolerance


def test_tolerance_follows_resolution_and_speed_spread():
    # common practice, no source: max(1.5 lines, f x spread)
    assert tolerance_hz(100.0, resolution_hz=0.5, speed_spread_frac=0.001) == pytest.approx(0.75)
    assert tolerance_hz(2000.0, resolution_hz=0.5, speed_spread_frac=0.01) == pytest.approx(20.0)
    assert tolerance_hz(2000.0, resolution_hz=0.5) == pytest.approx(0.75)
    # the spread is the largest departure from the mean: 1450..1500..1530 rpm -> 50/1500
    assert speed_spread_frac(1450 / 60, 1500 / 60, 1530 / 60) == pytest.approx(50 / 1500)


@pytest.mark.parametrize("kwargs", [dict(resolution_hz=0.0), dict(resolution_hz=-1.0),
                                    dict(resolution_hz=float("nan")), dict(resolution_hz=1.0, speed_spread_frac=-0.1)])
def test_tolerance_rejects_bad_values(kwargs):
    with pytest.raises(AnalysisError, match="must be a finite number"):
        tolerance_hz(100.0, **kwargs)


# --------------------------------------------------------------------------- spacing


def test_match_spacing_names_the_shaft(pair):
    # Domain reference 1.1: f_input = 50 Hz, f_output = 50*40/15 = 133.333 Hz
    best = match_spacing(50.4, pair, tolerance_hz=0.75)
    assert [m.shaft for m in best] == ["input"]
    assert best[0].rate_hz == pytest.approx(50.0)  # domain reference 1.1
    assert best[0].mismatch_hz == pytest.approx(0.4)
    assert best[0].mismatch_pct == pytest.approx(0.8)
    out = match_spacing(133.0, pair, tolerance_hz=0.75)
    assert [m.shaft for m in out] == ["output"]
    assert out[0].mismatch_hz == pytest.approx(133.0 - 50.0 * 40 / 15)  # domain reference 1.1
    assert match_spacing(90.0, pair, tolerance_hz=0.75) == []


def test_match_spacing_sorted_best_first_and_within_tolerance(pair):
    # a huge tolerance admits both shafts; the closer rate comes first
    out = match_spacing(60.0, pair, tolerance_hz=100.0)
    assert [m.shaft for m in out] == ["input", "output"]
    assert all(abs(m.mismatch_hz) <= 100.0 for m in out)


def test_match_spacing_on_order_axis(pair):
    # orders of the input shaft: the output turns at 40/15 = 2.6667 orders (domain reference 1.1)
    scale = axis_scale(pair, "order")
    out = match_spacing(2.667, pair, tolerance_hz=0.01, scale=scale)
    assert out[0].shaft == "output"
    assert out[0].rate_hz == pytest.approx(40 / 15)  # domain reference 1.1
    # CPM: 8000 rpm output shaft (domain reference 1.1)
    out = match_spacing(8000.0, pair, tolerance_hz=10.0, scale=axis_scale(pair, "cpm"))
    assert out[0].shaft == "output" and out[0].rate_hz == pytest.approx(8000.0)


def test_match_spacing_planet_pass(planetary):
    # planet pass = N_p f_c (Feng & Zuo 2012; McFadden & Smith 1985)
    stage = planetary.planetary[0]
    out = match_spacing(stage.planet_pass_hz, planetary, tolerance_hz=0.01)
    assert out[0].kind == "planet pass" and out[0].shaft == stage.name
    assert out[0].rate_hz == pytest.approx(3 * stage.carrier_hz)  # Feng & Zuo 2012: f_pp = N_p f_c


# --------------------------------------------------------------------------- explain


def test_explain_lower_sideband_of_input_shaft(pair):
    # 1950 Hz = 1 x GMF - 1 x input shaft rate (common practice, no source; numbers: domain reference 1.1)
    out = explain_peak(1950.0, pair, tolerance_hz=0.75)
    best = out[0]
    assert best.text.startswith("1 x GMF main pair - 1 x input shaft rate")
    assert (best.harmonic, best.sideband_k, best.shaft, best.family) == (1, -1, "input", "mesh:main pair")
    assert best.hz == pytest.approx(1950.0)  # domain reference 1.1
    assert best.error_hz == pytest.approx(0.0, abs=1e-9)


def test_explain_other_lines_of_the_pair(pair):
    # domain reference 1.1: GMF 2000 Hz, 2 x GMF 4000 Hz, output sidebands 2133.33 Hz
    assert explain_peak(2000.2, pair, tolerance_hz=0.75)[0].text == "1 x GMF main pair, 0.2 Hz off"
    assert explain_peak(4000.0, pair, tolerance_hz=0.75)[0].text.startswith("2 x GMF main pair,")
    upper = explain_peak(2133.5, pair, tolerance_hz=0.75)[0]
    assert (upper.sideband_k, upper.shaft) == (1, "output")
    assert upper.error_hz == pytest.approx(2133.5 - (2000 + 400 / 3))  # domain reference 1.1
    # 2 x output shaft rate
    assert explain_peak(266.7, pair, tolerance_hz=0.75)[0].text.startswith("2 x output shaft rate")


def test_explain_bearing_frequency(pair):
    # CWRU 6205: BPFO = 3.5848 x shaft rate (CWRU bearing data centre, via domain reference 2)
    bpfo = 3.5848 * 50.0 * 40 / 15
    out = explain_peak(bpfo, pair, tolerance_hz=0.75)
    assert out[0].family == "bearing:output DE 6205 bpfo"
    assert out[0].shaft == "output"
    assert abs(out[0].error_hz) < 1e-4 * bpfo  # CWRU quoted multiple, relative 1e-4 (domain reference 2)


def test_explain_planetary_sideband_prefers_planet_pass(planetary):
    # McFadden & Smith 1985: planetary mesh sidebands at multiples of the planet-pass frequency
    stage = planetary.planetary[0]
    out = explain_peak(stage.mesh_hz + stage.planet_pass_hz, planetary, tolerance_hz=0.05)
    assert "planet pass" in out[0].text
    assert out[0].sideband_k == 1


def test_explain_on_order_and_cpm_axes(pair):
    # 1950 Hz at 50 Hz input = 39 input orders = 117000 CPM (domain reference 1.1)
    orders = explain_peak(39.0, pair, tolerance_hz=0.01, scale=axis_scale(pair, "order"))
    assert (orders[0].sideband_k, orders[0].shaft) == (-1, "input")
    assert orders[0].hz == pytest.approx(39.0)
    assert orders[0].text.endswith("orders off")
    cpm = explain_peak(117000.0, pair, tolerance_hz=45.0, scale=60.0)
    assert (cpm[0].sideband_k, cpm[0].shaft) == (-1, "input") and cpm[0].text.endswith("CPM off")


def test_no_model_match(pair):
    out = explain_peak(1234.5, pair, tolerance_hz=0.5)
    assert out == []
    assert best_text(out) == NO_MATCH


def test_every_explanation_within_tolerance(pair):
    rng = np.random.default_rng(3)
    for f in rng.uniform(10.0, 6000.0, 200):
        for e in explain_peak(f, pair, tolerance_hz=3.0):
            assert abs(e.error_hz) <= 3.0
            assert e.hz == pytest.approx(f - e.error_hz)


def test_model_lines_counts(pair):
    lines = model_lines(pair, n_harmonics=5, n_sidebands=3)
    groups = {}
    for x in lines:
        groups[x.group] = groups.get(x.group, 0) + 1
    assert groups["mesh harmonics"] == 5 + 2  # 5 GMF harmonics + hunting tooth + assembly phase (N_A = 5)
    assert groups["sidebands"] == 5 * 2 * 3 * 2  # harmonics x shafts x orders x sides
    assert groups["shaft harmonics"] == 2 * 5
    assert groups["bearings"] == 4 * 5


# --------------------------------------------------------------------------- reading arrays


def test_amplitude_at_is_the_nearest_line():
    rng = np.random.default_rng(7)
    f = np.arange(0, 1000.0, 0.25)
    a = rng.random(f.size)
    for f0 in rng.uniform(0, 999.75, 50):
        ref = a[np.argmin(np.abs(f - f0))]  # numpy reference: nearest line
        assert amplitude_at(f, a, f0) == ref
    many = rng.uniform(0, 999.75, 20)
    np.testing.assert_array_equal(amplitude_at(f, a, many), a[np.argmin(np.abs(f[None, :] - many[:, None]), axis=1)])
    assert bin_index(f, -5.0) == 0 and bin_index(f, 5000.0) == f.size - 1


def test_nearest_peak_refines_an_off_bin_tone():
    rng = np.random.default_rng(11)
    fs, n = 1024.0, 4096
    t = np.arange(n) / fs
    f_true = 100.37
    x = 2.0 * np.sin(2 * np.pi * f_true * t) + 0.001 * rng.standard_normal(n)
    w = np.hanning(n + 1)[:-1]
    spec = np.abs(np.fft.rfft(x * w)) * 2 / w.sum()
    freq = np.fft.rfftfreq(n, 1 / fs)
    before = spec.copy()
    f, a = nearest_peak(freq, spec, 100.0, search_hz=1.5)
    import scipy.signal

    peaks, _ = scipy.signal.find_peaks(spec, height=0.5)  # scipy reference: the same local maximum
    assert abs(freq[peaks[0]] - f) < 0.5 * fs / n
    # quadratic interpolation on log magnitude, Hann: well under 0.1 line off (Smith & Serra 1987)
    assert abs(f - f_true) < 0.05 * fs / n
    # Smith & Serra 1987: the log parabola leaves a small height bias for Hann (measured +3.5 % at 0.48 line)
    assert a == pytest.approx(2.0, rel=0.05)
    assert a > spec.max()  # the refined height recovers part of the scalloping loss
    np.testing.assert_array_equal(spec, before)  # input untouched


def test_nearest_peak_picks_the_largest_in_reach_and_handles_edges():
    f = np.arange(10.0)
    a = np.array([5, 1, 1, 3, 1, 1, 8, 1, 1, 9], dtype=float)
    assert nearest_peak(f, a, 3.2, search_hz=1.0)[0] == pytest.approx(3.0)  # symmetric neighbours: exact
    assert nearest_peak(f, a, 4.0, search_hz=2.5)[0] == pytest.approx(6.0)
    assert nearest_peak(f, a, 9.0, search_hz=0.4) == (9.0, 9.0)  # last line: no parabola
    assert nearest_peak(f, a, 0.0, search_hz=0.0) == (0.0, 5.0)
    with pytest.raises(AnalysisError, match="1-D arrays"):
        nearest_peak(f, a[:5], 1.0, search_hz=1.0)


def test_nearest_peak_prefers_a_local_maximum_to_a_slope():
    f = np.arange(10.0)
    a = np.array([1, 2, 3, 9, 8, 7, 6, 5, 4, 3], dtype=float)
    # reach 4..6 holds only a falling slope: no local maximum, so the largest line there is returned
    assert nearest_peak(f, a, 5.0, search_hz=1.0) == (4.0, 8.0)
    # reach 2..6 holds the maximum at 3 (common practice, no source: a peak is a local maximum)
    assert round(nearest_peak(f, a, 4.0, search_hz=2.0)[0]) == 3
    b = np.array([1, 2, 9, 3, 8, 9.5, 1, 1, 1, 1], dtype=float)
    # two local maxima in reach: the larger (5) wins over the one nearer the centre (2)
    assert round(nearest_peak(f, b, 3.0, search_hz=2.5)[0]) == 5


# --------------------------------------------------------------------------- band-averaged lines


def _band_lines(x, fs, m):
    """numpy reference: Hann-windowed rfft (peak scaling) grouped into bands of m lines; each band line is
    sqrt(sum A^2 / ENBW_bins) over lines j m - m/2 .. j m + m/2 - 1 (Parseval's relation, Oppenheim &
    Schafer 2010, Sec. 8.5; Hann ENBW 1.5 lines, Harris 1978, Table I)."""
    n = x.size
    w = np.hanning(n + 1)[:-1]
    a = np.abs(np.fft.rfft(x * w)) * 2 / w.sum()
    enbw_bins = n * np.sum(w**2) / np.sum(w) ** 2
    n_bands = (a.size - m // 2) // m
    power = np.concatenate([np.zeros(m // 2), a])[: n_bands * m].reshape(n_bands, m) ** 2
    return np.arange(n_bands) * m * fs / n, np.sqrt(power.sum(axis=1) / enbw_bins)


@pytest.mark.parametrize("offset_lines", [3.5, 0.0, 2.0])   # band edge, band centre, in between
def test_nearest_peak_on_band_lines_reads_the_tone_by_parseval(offset_lines):
    rng = np.random.default_rng(3)
    fs, n, m = 1024.0, 8192, 8
    df = fs / n
    f_tone = (40 * m + offset_lines) * df       # 3.5 fine lines past band 40's centre: the edge to band 41
    x = 1.5 * np.sin(2 * np.pi * f_tone * np.arange(n) / fs) + 0.01 * rng.standard_normal(n)
    f, a = _band_lines(x, fs, m)
    before = a.copy()
    pf, pa = nearest_peak(f, a, f_tone, search_hz=2 * m * df, lines="band")
    # Parseval's relation: the tone's power is the sum over the lines it lands on (Oppenheim & Schafer 2010,
    # Sec. 8.5), so the power sum of the peak line and its larger neighbour is the tone amplitude 1.5
    assert pa == pytest.approx(1.5, rel=0.005)
    assert pf in (f[40], f[41]) and abs(pf - f_tone) <= m * df   # the centre of a line holding the tone
    np.testing.assert_array_equal(a, before)   # input untouched
    if offset_lines == 3.5:
        # on the edge each line holds half the power: 1.5 / sqrt 2 (Parseval; Oppenheim & Schafer 2010)
        assert a[40] == pytest.approx(1.5 / np.sqrt(2), rel=0.01) and a[41] == pytest.approx(a[40], rel=0.01)
        # Smith & Serra 1987 fit a window-shaped peak; on two equal flat-topped band lines the log parabola's
        # vertex rises far above both (measured +67 %), which is why band lines need the power sum
        assert nearest_peak(f, a, f_tone, search_hz=2 * m * df)[1] > 1.3 * 1.5


def test_band_peak_amplitude_is_the_power_sum_with_the_larger_neighbour():
    a = np.array([3.0, 4.0, 1.0, 0.0, 2.0])
    # sqrt(4^2 + 3^2) = 5 (Pythagorean triple; Parseval's relation, Oppenheim & Schafer 2010, Sec. 8.5)
    assert band_peak_amplitude(a, 1) == pytest.approx(5.0)
    assert band_peak_amplitude(a, 0) == pytest.approx(5.0)        # one neighbour at the first line
    assert band_peak_amplitude(a, 4) == pytest.approx(2.0)        # last line, neighbour 0
    with pytest.raises(AnalysisError, match="outside the 5 lines"):
        band_peak_amplitude(a, 5)


def test_nearest_peak_lines_option():
    f = np.arange(10.0)
    a = np.array([5, 1, 1, 3, 2, 1, 8, 1, 1, 9], dtype=float)
    # "fft" is the default: the same reading whether named or not
    assert nearest_peak(f, a, 3.2, search_hz=1.0, lines="fft") == nearest_peak(f, a, 3.2, search_hz=1.0)
    # "band": the line itself, power sum with the larger neighbour sqrt(9 + 4) (Parseval's relation)
    assert nearest_peak(f, a, 3.2, search_hz=1.0, lines="band") == (3.0, pytest.approx(np.sqrt(13.0)))
    with pytest.raises(AnalysisError, match=r"Invalid value for 'lines': allowed 'fft', 'band', got 'coarse'"):
        nearest_peak(f, a, 3.2, search_hz=1.0, lines="coarse")
