"""Envelope family matching and suspect ranking on signals and inputs built here."""

from types import SimpleNamespace

import numpy as np
import pytest
import scipy.signal
import scipy.stats

from dsp.sidebands import detection_threshold_db
from dsp.suspects import CAUTION, EnvelopeMatch, EnvelopeTarget, match_envelope, rank_suspects, score_components

# CWRU 6205 drive-end bearing at 1797 rpm (domain reference sec. 2): multiples of running speed
FR_HZ = 1797 / 60
BPFO_X, BPFI_X, FTF_X, BSF2_X = 3.5848, 5.4152, 0.39828, 4.7135


def test_detection_threshold_false_alarm_rate():
    # Rayleigh amplitude of complex Gaussian noise (Kay 1998, detection theory):
    # median = sigma * sqrt(2 ln 2); scipy.stats.rayleigh is the reference
    assert scipy.stats.rayleigh.median() == pytest.approx(np.sqrt(2 * np.log(2)), rel=1e-12)
    rng = np.random.default_rng(11)
    n_bins, n_windows = 5, 40000
    amp = np.abs(rng.standard_normal((n_windows, n_bins)) + 1j * rng.standard_normal((n_windows, n_bins)))
    median = scipy.stats.rayleigh.median()  # unit-variance real and imaginary parts: sigma = 1
    thr = detection_threshold_db(n_bins, 0.01, minimum_db=0.0)
    passed = np.mean(20 * np.log10(amp.max(axis=1) / median) >= thr)
    # union bound n * 2**(-t^2) = 0.01 (Rayleigh tail); the true rate is at most that
    assert 0.006 < passed <= 0.0115


def bearing_ses(rate_hz, *, fs=20000.0, duration_s=4.0, seed=0, slip=0.01, noise=0.2):
    """Squared-envelope spectrum (scipy.signal.hilbert) of impacts ringing a 4 kHz resonance."""
    rng = np.random.default_rng(seed)
    n = int(fs * duration_s)
    period = 1 / (rate_hz * (1 - slip))
    t_ev = np.cumsum(period * (1 + 0.005 * rng.standard_normal(int(duration_s / period) + 2)))
    x = np.zeros(n)
    idx = (t_ev[t_ev < duration_s - 0.01] * fs).astype(int)
    x[idx] = 1.0
    b, a = scipy.signal.iirpeak(4000, 20, fs=fs)
    y = scipy.signal.lfilter(b, a, x) + noise * rng.standard_normal(n) * 0.1
    sos = scipy.signal.butter(4, [3000, 5000], btype="bandpass", fs=fs, output="sos")
    e2 = np.abs(scipy.signal.hilbert(scipy.signal.sosfiltfilt(sos, y))) ** 2
    amp = np.abs(np.fft.rfft(e2 - e2.mean())) * 2 / n
    return np.fft.rfftfreq(n, 1 / fs), amp


def cwru_targets():
    comp = "bearing:6205 DE"
    return [
        EnvelopeTarget("shaft:input", "shaft rate", "1x input", "input", FR_HZ, None, 0.0),
        EnvelopeTarget(comp, "bearing outer race", "BPFO", "input", BPFO_X * FR_HZ),
        EnvelopeTarget(comp, "bearing inner race", "BPFI", "input", BPFI_X * FR_HZ, FR_HZ),
        EnvelopeTarget(comp, "bearing rolling element", "2xBSF", "input", BSF2_X * FR_HZ, FTF_X * FR_HZ),
        EnvelopeTarget(comp, "bearing cage", "FTF", "input", FTF_X * FR_HZ),
    ]


def test_outer_race_impacts_match_bpfo_only():
    f, a = bearing_ses(BPFO_X * FR_HZ, seed=1)
    matches = {m.label: m for m in match_envelope(f, a, cwru_targets())}
    # CWRU bearing specifications (BPFO 3.5848 x running speed), 1 % slip within the
    # 1-2 % of Randall & Antoni 2011
    assert matches["BPFO"].n_clear >= 3
    assert matches["BPFI"].n_clear == 0
    assert matches["2xBSF"].n_clear <= 1
    found = [h.found_hz for h in matches["BPFO"].hits if h.clear]
    assert found[0] == pytest.approx(BPFO_X * FR_HZ * 0.99, rel=0.004)  # slip 1 % as simulated here

    suspects = rank_suspects([], [], tuple(matches.values()))
    assert suspects and suspects[0].component == "bearing:6205 DE"
    assert suspects[0].kind == "bearing outer race"  # CWRU / Randall & Antoni 2011
    assert suspects[0].view == "envelope"
    assert suspects[0].caution == CAUTION


def test_noise_only_envelope_gives_no_bearing_suspect():
    rng = np.random.default_rng(2)
    n, fs = 80000, 20000.0
    y = rng.standard_normal(n)
    e2 = np.abs(scipy.signal.hilbert(y)) ** 2
    a = np.abs(np.fft.rfft(e2 - e2.mean())) * 2 / n
    f = np.fft.rfftfreq(n, 1 / fs)
    matches = match_envelope(f, a, cwru_targets())
    assert all(m.n_clear <= 1 for m in matches)  # common practice, no source: noise has no families
    assert rank_suspects([], [], matches) == ()


def tsa_item(shaft, fm4, na4=None, m6a=15.0, n_revs=60):
    return SimpleNamespace(shaft=shaft, n_revs=n_revs,
                           indicators={"fm4": fm4, "na4": fm4 if na4 is None else na4, "m6a": m6a,
                                       "kurtosis": 3.0, "rms": 1.0})


def test_healthy_indicators_give_no_suspect():
    # FM4 and NA4 near 3 and M6A near 15: Gaussian values (Stewart 1977; Martin 1989);
    # 4.4 is within the scatter of healthy gears (common practice, no source)
    tsa = [tsa_item("input", 3.05), tsa_item("intermediate", 4.4, m6a=38.0), tsa_item("output", 2.9, m6a=14.0)]
    assert rank_suspects(tsa, [], []) == ()
    scores = score_components(tsa, [], [])
    assert max(s.score for s in scores) < 0.2


def impacts_once_per_rev(shaft, hz=8.0):
    """The envelope match of a shaft whose rate and 3 harmonics stand clear."""
    return EnvelopeMatch(f"shaft:{shaft}", "shaft rate", f"1x {shaft}", shaft, hz, 0.0, (), 4, 0, None,
                         (f"1x {shaft}: 4 clear harmonics",))


def test_impulsive_shaft_ranks_first():
    # a local tooth fault makes FM4 / NA4 rise well above 3 (Stewart 1977; Zakrajsek et al. 1993)
    # and strikes once per revolution, so the envelope shows the shaft rate (Randall 2011)
    tsa = [tsa_item("input", 3.1), tsa_item("intermediate", 7.5, na4=8.0, m6a=120.0), tsa_item("output", 3.3)]
    suspects = rank_suspects(tsa, [], [impacts_once_per_rev("intermediate")])
    assert [s.component for s in suspects] == ["shaft:intermediate"]
    assert suspects[0].kind == "localized tooth damage"
    assert suspects[0].view == "tsa"
    assert any("FM4 7.50" in e for e in suspects[0].evidence)
    assert any("once per revolution" in e for e in suspects[0].evidence)
    # the same indicators without any corroboration stay below the alarm threshold
    # (manufacturing errors can lift FM4 of a healthy gear; common practice, no source)
    assert rank_suspects(tsa, [], []) == ()


def test_threshold_filters_and_order_is_by_score():
    tsa = [tsa_item("a", 6.5), tsa_item("b", 12.0)]
    env = [impacts_once_per_rev("a"), impacts_once_per_rev("b", 3.0)]
    low = rank_suspects(tsa, [], env, threshold=0.1)
    assert [s.component for s in low] == ["shaft:b", "shaft:a"]
    assert low[0].score >= low[1].score
    high = rank_suspects(tsa, [], env, threshold=0.75)
    assert [s.component for s in high] == ["shaft:b"]
