"""Tests of dsp.indicators against moment algebra, scipy.stats and the published definitions."""

import math

import numpy as np
import pytest
import scipy.stats

from dsp.errors import AnalysisError
from dsp.indicators import (
    crest_factor,
    energy_ratio,
    fm0,
    fm4,
    kurtosis,
    m6a,
    m8a,
    na4,
    order_amplitude,
    peak,
    rms,
    sideband_index,
    sideband_level_factor,
)

THETA = 2 * np.pi * np.arange(1024) / 1024  # one revolution, 1024 samples


def test_sine_moments():
    x = np.sin(5 * THETA)  # 5 whole cycles
    assert rms(x) == pytest.approx(1 / math.sqrt(2), abs=1e-9)  # A/sqrt2, domain-reference 4
    assert crest_factor(x) == pytest.approx(math.sqrt(2), abs=1e-9)  # domain-reference 4
    assert peak(x) == pytest.approx(1.0, abs=1e-9)
    assert kurtosis(x) == pytest.approx(1.5, abs=1e-9)  # E sin^4/(E sin^2)^2 = 3/2, domain-reference 4
    assert m6a(x) == pytest.approx(2.5, abs=1e-9)  # Martin 1989 via moment algebra, domain-reference 4
    assert m8a(x) == pytest.approx(4.375, abs=1e-9)  # Martin 1989 via moment algebra, domain-reference 4
    assert fm4(x) == pytest.approx(1.5, abs=1e-9)  # Stewart 1977: FM4 is the kurtosis of d


def test_square_and_uniform_kurtosis():
    square = np.sign(np.sin(5 * THETA + 0.1))
    assert kurtosis(square) == pytest.approx(1.0, abs=1e-9)  # domain-reference 4: square wave 1.0
    u = np.random.default_rng(4).uniform(-1, 1, 2**16)
    assert kurtosis(u) == pytest.approx(1.8, abs=0.03)  # domain-reference 4: uniform 1.8


def test_gaussian_moments_and_scipy_reference():
    x = np.random.default_rng(12345).standard_normal(2**20)
    k = kurtosis(x)
    assert k == pytest.approx(3.0, abs=0.03)  # Gaussian E z^4 = 3, tolerance domain-reference 4 (~6 sigma)
    assert m6a(x) == pytest.approx(15.0, abs=0.5)  # E z^6 = 15, domain-reference 4
    assert m8a(x) == pytest.approx(105.0, abs=8.0)  # E z^8 = 105, domain-reference 4
    # scipy.stats.kurtosis(fisher=False, bias=True) as reference implementation of Pearson's kurtosis
    assert k == pytest.approx(scipy.stats.kurtosis(x, fisher=False, bias=True), rel=1e-12)
    assert m6a(x) == pytest.approx(scipy.stats.moment(x, 6) / np.var(x) ** 3, rel=1e-10)  # scipy.stats.moment
    assert crest_factor(x) > 4.0  # grows with N (domain-reference 4); 2**20 Gaussian samples reach ~5 sigma


def test_float32_input_is_accumulated_in_float64():
    x = np.random.default_rng(8).standard_normal(4096)
    assert kurtosis(x.astype(np.float32)) == pytest.approx(kurtosis(x), rel=1e-5)


def test_fm0_checks():
    assert fm0(np.cos(20 * THETA), [20]) == pytest.approx(2.0, abs=1e-9)  # domain-reference 4: pure mesh tone
    x = np.cos(20 * THETA) + 0.1 * np.cos(19 * THETA) + 0.1 * np.cos(21 * THETA)
    assert fm0(x, [20]) == pytest.approx(2.396018, abs=1e-6)  # domain-reference 4 (computed)
    y = np.cos(20 * THETA) + 0.5 * np.cos(40 * THETA + 0.3)
    assert fm0(y, [20, 40]) == pytest.approx(1.578902, abs=1e-6)  # domain-reference 4 (computed, H = 2)
    # two revolutions of the same signal: orders are read with samples_per_rev
    assert fm0(np.tile(y, 2), [20, 40], samples_per_rev=1024) == pytest.approx(1.578902, abs=1e-6)


def test_sideband_index_and_level_factor_from_a_tsa():
    tsa = np.cos(20 * THETA) + 0.1 * np.cos(19 * THETA) + 0.1 * np.cos(21 * THETA)
    lo = order_amplitude(tsa, 19)
    hi = order_amplitude(tsa, 21)
    assert np.std(tsa) == pytest.approx(0.714143, abs=1e-6)  # domain-reference 4
    assert sideband_index(lo, hi) == pytest.approx(0.1, abs=1e-9)  # domain-reference 4: SI
    assert sideband_level_factor(lo, hi, np.std(tsa)) == pytest.approx(0.280056, abs=1e-6)  # domain-reference 4: SLF
    assert math.isnan(sideband_level_factor(lo, hi, 0.0))


def test_energy_ratio():
    assert energy_ratio(0.2 * np.cos(7 * THETA), np.cos(20 * THETA)) == pytest.approx(0.2, abs=1e-9)  # domain-reference 4
    assert math.isnan(energy_ratio(np.ones(8), np.zeros(8)))


def test_na4_run_normalisation():
    r1 = np.sin(5 * THETA)
    r2 = 2 * np.sin(5 * THETA)
    assert na4(r2) == pytest.approx(1.5, abs=1e-9)  # Zakrajsek et al. 1993, M = 1 equals kurtosis
    # Zakrajsek et al. 1993 normalisation: 6 N^2 / (1.25 N)^2 = 3.84, domain-reference 4
    assert na4(r2, history=[r1]) == pytest.approx(3.84, abs=1e-9)
    rng = np.random.default_rng(9)
    g = rng.standard_normal(2**16)
    assert na4(g) == pytest.approx(3.0, abs=0.1)  # Gaussian, M = 1: domain-reference 4


def test_zero_variance_gives_nan():
    zeros = np.zeros(1024)
    const = np.full(1024, 0.1)
    for f in (kurtosis, fm4, m6a, m8a, na4):
        assert math.isnan(f(zeros))  # domain-reference 3.3: must return NaN, never divide by zero
        assert math.isnan(f(const))
    assert math.isnan(crest_factor(zeros))
    assert math.isnan(fm0(zeros, [20]))
    # a difference signal from an FFT keeps rounding residue; atol treats it as zero
    x = np.cos(20 * THETA)
    d = x - np.fft.irfft(np.fft.rfft(x), n=x.size)
    assert math.isnan(fm4(d, atol=1e-9 * rms(x)))


def test_fm4_of_difference_signal_with_noise():
    # domain-reference 3.3: d is pure noise sigma 0.05 -> FM4 = 3 +- 0.5
    rng = np.random.default_rng(21)
    tsa = (np.cos(20 * THETA) + 0.5 * np.cos(40 * THETA) + 0.3 * np.cos(THETA)
           + 0.1 * np.cos(19 * THETA) + 0.1 * np.cos(21 * THETA) + 0.05 * rng.standard_normal(1024))
    X = np.fft.rfft(tsa)
    X[[1, 19, 20, 21, 40]] = 0  # regular signal removed (local helper; dsp.tsa owns the real one)
    d = np.fft.irfft(X, n=1024)
    assert fm4(d) == pytest.approx(3.0, abs=0.5)  # domain-reference 3.3


def test_bad_input_raises():
    with pytest.raises(AnalysisError, match="empty"):
        rms([])
    with pytest.raises(AnalysisError, match="non-finite"):
        kurtosis([1.0, np.inf, 2.0])
    with pytest.raises(AnalysisError, match="order="):
        order_amplitude(np.ones(16), 9)


def test_two_dimensional_input_is_refused():
    with pytest.raises(AnalysisError, match="1-D"):
        kurtosis(np.ones((4, 4)))
