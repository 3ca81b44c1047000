"""Physics of the gearbox simulator (dsp.synth) checked against outside facts.

Small signals (a few seconds at 8-16 kHz) keep the whole file fast.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.signal

from dsp.errors import AnalysisError, GearbenchError
from dsp.model import Bearing, GearTrain, Mesh, Planetary, Shaft, Tach
from dsp.synth import Fault, simulate


def two_stage() -> GearTrain:
    # The multi-stage check of the domain reference, section 1.3: 20T -> 61T, 18T -> 53T.
    return GearTrain(
        name="test two-stage",
        tach=Tach(shaft="in", nominal_rpm=1500.0),
        shafts=(Shaft("in"), Shaft("mid"), Shaft("out")),
        meshes=(Mesh("s1", "in", 20, "mid", 61), Mesh("s2", "mid", 18, "out", 53)),
        # CWRU drive-end 6205 geometry (inches; only the ratio d/D matters), n = 9
        bearings=(Bearing("de", "in", 9, 0.3126, 1.537, 0.0),),
    )


def one_stage(driver_teeth=20, driven_teeth=61) -> GearTrain:
    return GearTrain(
        tach=Tach(shaft="in", nominal_rpm=1500.0),
        shafts=(Shaft("in"), Shaft("mid")),
        meshes=(Mesh("s1", "in", driver_teeth, "mid", driven_teeth),),
    )


def amplitude_spectrum(x, fs):
    x = np.asarray(x, dtype=np.float64)
    w = scipy.signal.windows.hann(x.size, sym=False)
    amp = 2 * np.abs(np.fft.rfft((x - x.mean()) * w)) / w.sum()
    return np.fft.rfftfreq(x.size, 1 / fs), amp


def peak_near(freq, amp, f0, half_width):
    m = (freq > f0 - half_width) & (freq < f0 + half_width)
    return freq[m][np.argmax(amp[m])]


# ---------------------------------------------------------------------------
# Mesh frequencies and sidebands
# ---------------------------------------------------------------------------


def test_gmf_peaks_where_kinematics_say():
    fs = 8192.0
    sim = simulate(two_stage(), rpm=1500, duration_s=4.0, fs=fs, seed=1)
    freq, amp = amplitude_spectrum(sim.acceleration_g, fs)
    bin_hz = freq[1]
    # domain reference 1.3 (computed): GMF_1 = 500 Hz, GMF_2 = 147.541 Hz at 25 Hz input
    for gmf in (500.0, 147.541, 2 * 500.0, 2 * 147.541):
        assert abs(peak_near(freq, amp, gmf, 4.0) - gmf) <= bin_hz  # one bin; domain reference 1.3
    # the first stage mesh is the largest line of the spectrum (it is the loudest stage)
    assert abs(freq[np.argmax(amp)] - 500.0) <= bin_hz  # common practice, no source


def test_ramp_speed_keeps_mesh_phase_locked_to_the_shaft():
    # With a 10 % ramp the truth angle is the integral of the speed: f0((1-v) t + v t^2 / T) - angle0.
    fs, dur, v = 8192.0, 2.0, 0.10
    sim = simulate(one_stage(), rpm=1500, duration_s=dur, fs=fs, speed="ramp", speed_variation_pct=10, seed=2)
    t = np.arange(sim.n_frames) / fs
    expected = 25.0 * ((1 - v) * t + v * t**2 / dur) - sim.parameters["start_angle_rev"]
    # calculus: angle = integral of speed; trapezoid error only
    assert np.max(np.abs(sim.reference_angle_rev - expected)) < 1e-6
    assert sim.reference_hz.min() == pytest.approx(22.5, rel=1e-3)  # common practice, no source (definition of the ramp)
    assert sim.reference_hz.max() == pytest.approx(27.5, rel=1e-3)


@pytest.mark.parametrize("shaft, shaft_hz", [("mid", 25.0 * 20 / 61), ("in", 25.0)])
def test_sideband_spacing_is_the_faulty_shaft_rate(shaft, shaft_hz):
    fs = 8192.0
    sim = simulate(one_stage(), rpm=1500, duration_s=8.0, fs=fs, seed=3,
                   faults=[Fault("tooth", shaft, tooth=5, severity="severe")])
    freq, amp = amplitude_spectrum(sim.acceleration_g, fs)
    bin_hz = freq[1]
    gmf = 500.0
    # the three strongest lines beside the GMF (within 2.5 shaft rates, GMF excluded;
    # further out, 3 x 8.2 Hz would fall on the 25 Hz family of the other shaft)
    m = (np.abs(freq - gmf) < 2.5 * shaft_hz) & (np.abs(freq - gmf) > 3 * bin_hz)
    f_m, a_m = freq[m], amp[m]
    peaks, _ = scipy.signal.find_peaks(a_m)
    top = f_m[peaks[np.argsort(a_m[peaks])[::-1][:3]]]
    k = (top - gmf) / shaft_hz
    # Randall 2011 (from memory): a local fault modulates the mesh at the rate of the
    # shaft carrying the gear, so sidebands sit at GMF +- k f_shaft
    assert np.all(np.abs(k - np.round(k)) * shaft_hz <= 1.5 * bin_hz)
    assert np.all(np.round(k) != 0)


def test_planetary_mesh_lines_at_multiples_of_planet_pass():
    # Domain reference 1.5 check: Zs 20, Zp 30, Zr 80, 4 planets, sun at 25 Hz:
    # carrier 5 Hz, mesh 400 Hz, planet pass 20 Hz.
    fs = 8192.0
    train = GearTrain(tach=Tach(shaft="sun"), shafts=(Shaft("sun"), Shaft("carrier")),
                      planetary=(Planetary("p", "sun", 20, 30, 4, 80, "carrier"),))
    sim = simulate(train, rpm=1500, duration_s=4.0, fs=fs, seed=4, noise_g=0.0)
    freq, amp = amplitude_spectrum(sim.acceleration_g, fs)
    m = (freq > 330) & (freq < 470)
    peaks, _ = scipy.signal.find_peaks(amp[m], height=0.1 * amp[m].max())
    lines = freq[m][peaks]
    assert abs(freq[m][np.argmax(amp[m])] - 400.0) <= freq[1]  # domain reference 1.5 (computed): f_m = 400 Hz
    # McFadden & Smith 1985 (from memory): planets passing a fixed sensor modulate the
    # mesh at the planet-pass frequency, giving lines at multiples of N_p f_c
    assert np.all(np.abs((lines - 400.0) / 20.0 - np.round((lines - 400.0) / 20.0)) * 20.0 <= freq[1])
    assert np.any(np.abs(lines - 420.0) <= freq[1])


def test_sequentially_phased_planets_suppress_the_mesh_fundamental():
    # Zr = 80 with 3 planets: Zr / N_p is not whole, so the planets mesh out of phase.
    fs = 8192.0
    train = GearTrain(tach=Tach(shaft="sun"), shafts=(Shaft("sun"), Shaft("carrier")),
                      planetary=(Planetary("p", "sun", 22, 29, 3, 80, "carrier"),))
    sim = simulate(train, rpm=1500, duration_s=4.0, fs=fs, seed=5, noise_g=0.0)
    freq, amp = amplitude_spectrum(sim.acceleration_g, fs)
    fc = 25.0 * 22 / 102  # domain reference 1.5 (Willis relation)
    fm = 80 * fc
    at_fm = amp[np.argmin(np.abs(freq - fm))]
    strongest = peak_near(freq, amp, fm, 3.5 * fc)
    # McFadden & Smith 1985 (from memory): with sequential phasing the line at the mesh
    # frequency cancels and the strongest line is the multiple of N_p f_c nearest to it (81 f_c)
    assert abs(strongest - 81 * fc) <= freq[1]
    assert at_fm < 0.1 * amp[np.argmin(np.abs(freq - strongest))]


def test_sun_tooth_fault_meets_the_planets_at_the_sun_fault_frequency():
    # Domain reference 1.5 check: Zs 20, Zp 30, Zr 80, 4 planets, sun 25 Hz -> sun fault 80 Hz.
    train = GearTrain(tach=Tach(shaft="sun"), shafts=(Shaft("sun"), Shaft("carrier")),
                      planetary=(Planetary("p", "sun", 20, 30, 4, 80, "carrier"),))
    sim = simulate(train, rpm=1500, duration_s=1.0, fs=8192.0, seed=6,
                   faults=[Fault("tooth", "sun", tooth=3, severity="severe")])
    intervals = np.diff(sim.fault_events_s[0])
    # Feng & Zuo 2012 (from memory), domain reference 1.5: f_sun = N_p (f_s - f_c) = 80 Hz
    assert np.allclose(intervals, 1 / 80.0, rtol=1e-6)


def test_eccentricity_gives_first_sidebands_at_the_shaft_rate():
    fs = 8192.0
    healthy = simulate(one_stage(), rpm=1500, duration_s=4.0, fs=fs, seed=8)
    ecc = simulate(one_stage(), rpm=1500, duration_s=4.0, fs=fs, seed=8,
                   faults=[Fault("eccentricity", "mid", severity="severe")])
    f_mid = 25.0 * 20 / 61
    ratios = []
    for sim in (healthy, ecc):
        freq, amp = amplitude_spectrum(sim.acceleration_g, fs)
        gmf = amp[np.abs(freq - 500) < 0.5].max()
        sb = max(amp[np.abs(freq - (500 + k * f_mid)) < 0.3].max() for k in (-1, 1))
        ratios.append(sb / gmf)
    # Randall 2011 (from memory): eccentricity amplitude-modulates the mesh at the shaft
    # rate; AM of depth m gives first sidebands near m/2 of the carrier (0.45 -> ~0.2)
    assert ratios[0] < 0.06
    assert 0.12 < ratios[1] < 0.4


def test_wear_raises_the_higher_mesh_harmonics():
    fs = 8192.0
    ratios = []
    for faults in ((), (Fault("wear", "in", severity="severe"),)):
        sim = simulate(one_stage(), rpm=1500, duration_s=2.0, fs=fs, seed=9, faults=faults)
        freq, amp = amplitude_spectrum(sim.acceleration_g, fs)
        ratios.append(amp[np.abs(freq - 1000) < 1].max() / amp[np.abs(freq - 500) < 1].max())
    # Randall 2011 (from memory): distributed wear shows first as growth of the higher
    # mesh harmonics relative to the fundamental
    assert ratios[1] > 2.5 * ratios[0]


# ---------------------------------------------------------------------------
# Time-synchronous average of the faulty shaft
# ---------------------------------------------------------------------------


def tsa_by_truth_angle(sim, shaft, samples_per_rev):
    """TSA computed simply: resample by the truth angle, average the revolutions."""
    angle = sim.shaft_angle_rev(shaft)
    t = np.arange(sim.n_frames) / sim.fs
    n_revs = int(math.floor(angle[-1]))
    grid = np.arange(n_revs * samples_per_rev) / samples_per_rev
    x = np.interp(np.interp(grid, angle, t), t, sim.acceleration_g.astype(np.float64))
    return x.reshape(n_revs, samples_per_rev).mean(axis=0)


def difference_signal(avg, teeth):
    spec = np.fft.rfft(avg)
    spec[:4] = 0
    for h in range(1, avg.size // 2 // teeth + 1):
        spec[max(h * teeth - 1, 0):h * teeth + 2] = 0
    return np.fft.irfft(spec, avg.size)


@pytest.mark.parametrize("shaft, teeth, severity", [("mid", 61, "severe"), ("in", 20, "mild")])
def test_tsa_peaks_at_the_damaged_tooth(shaft, teeth, severity):
    rng = np.random.default_rng(11)
    tooth = int(rng.integers(0, teeth))
    fs = 8192.0
    sim = simulate(one_stage(), rpm=1500, duration_s=6.0, fs=fs, seed=int(rng.integers(1000)),
                   faults=[Fault("tooth", shaft, tooth=tooth, severity=severity)])
    p = 1024
    d = difference_signal(tsa_by_truth_angle(sim, shaft, p), teeth)
    env = np.abs(scipy.signal.hilbert(d))
    found_rev = np.argmax(env) / p
    # McFadden 1986: a local tooth fault shows in the TSA (difference signal) at the
    # damaged tooth; our convention puts tooth k at (k + 0.5)/Z of a revolution
    err_teeth = (found_rev - (tooth + 0.5) / teeth) * teeth
    err_teeth -= teeth * np.round(err_teeth / teeth)
    assert abs(err_teeth) <= 1.0
    # Stewart 1977 (from memory): FM4 (kurtosis of the difference signal) of a gear with
    # a local fault rises well above the Gaussian 3
    dd = d - d.mean()
    assert np.mean(dd**4) / np.mean(dd**2) ** 2 > 4.0


def test_healthy_tsa_difference_signal_is_near_gaussian():
    sim = simulate(one_stage(), rpm=1500, duration_s=6.0, fs=8192.0, seed=21)
    d = difference_signal(tsa_by_truth_angle(sim, "mid", 1024), 61)
    dd = d - d.mean()
    fm4 = np.mean(dd**4) / np.mean(dd**2) ** 2
    # domain reference 4 (Stewart 1977, from memory): FM4 of a healthy gear is near 3
    assert 2.0 < fm4 < 4.0


# ---------------------------------------------------------------------------
# Bearing faults: envelope spectrum
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("kind, expected_order", [
    ("outer-race", 3.5848),       # CWRU 6205 drive end, BPFO = 3.5848 x running speed
    ("inner-race", 5.4152),       # CWRU 6205 drive end, BPFI = 5.4152 x running speed
    ("rolling-element", 4.7135),  # CWRU 6205 drive end, "rolling element" = 2 x BSF
])
def test_envelope_spectrum_peaks_at_defect_frequency(kind, expected_order):
    fs = 16384.0
    rpm = 1797.0
    sim = simulate(two_stage(), rpm=rpm, duration_s=3.0, fs=fs, seed=31,
                   faults=[Fault(kind, "de", severity="severe")])
    x = sim.acceleration_g.astype(np.float64)
    sos = scipy.signal.butter(4, [4000, 6500], btype="bandpass", fs=fs, output="sos")
    env = np.abs(scipy.signal.hilbert(scipy.signal.sosfiltfilt(sos, x)))
    freq, amp = amplitude_spectrum(env, fs)
    expected_hz = expected_order * rpm / 60.0
    m = (freq > 20) & (freq < 250)
    found = freq[m][np.argmax(amp[m])]
    # Randall & Antoni 2011: the envelope spectrum shows the defect frequency, within
    # 1-2 % because of slip; CWRU bearing data centre specifications for the orders
    assert abs(found / expected_hz - 1) < 0.02


def test_bearing_impacts_jitter_by_about_one_percent():
    sim = simulate(two_stage(), rpm=1797, duration_s=3.0, fs=16384.0, seed=32,
                   faults=[Fault("outer-race", "de")])
    intervals = np.diff(sim.fault_events_s[0])
    spread = intervals.std() / intervals.mean()
    # Randall & Antoni 2011: 1-2 % random variation of the impact interval
    assert 0.005 < spread < 0.02
    mean_rate = 1 / intervals.mean()
    assert mean_rate == pytest.approx(3.5848 * 1797 / 60, rel=0.02)  # CWRU BPFO; slip within 2 % (Randall & Antoni 2011)


# ---------------------------------------------------------------------------
# Tach, determinism, errors
# ---------------------------------------------------------------------------


def rising_crossings(x, level):
    above = x > level
    return np.flatnonzero(~above[:-1] & above[1:]) + 1


def test_tach_edges_count_the_revolutions():
    fs, dur, rpm = 8192.0, 3.0, 1500.0
    sim = simulate(one_stage(), rpm=rpm, duration_s=dur, fs=fs, seed=41,
                   speed="fluctuating", speed_variation_pct=5)
    idx = rising_crossings(sim.tach, 0.5 * 0.5)
    theta = sim.reference_angle_rev
    n_revs = math.floor(theta[-1]) - math.ceil(theta[0]) + 1
    # once-per-rev tach: one rising edge per revolution (common practice, no source)
    assert idx.size == n_revs == sim.tach_times_s.size
    # each edge at the truth time, to within one sample (linear interpolation of the 50 % crossing)
    x = sim.tach.astype(np.float64)
    t_cross = (idx - 1 + (0.25 - x[idx - 1]) / (x[idx] - x[idx - 1])) / fs
    assert np.max(np.abs(t_cross - sim.tach_times_s)) < 1.0 / fs  # common practice, no source
    # the revolutions are the integral of the speed: mean speed x duration, within one
    assert abs(n_revs - sim.reference_hz.mean() * dur) <= 1.0  # calculus, no source


def test_missing_tach_pulses_are_left_out():
    sim = simulate(one_stage(), rpm=1500, duration_s=3.0, fs=8192.0, seed=42, missing_tach_pct=10)
    n_missing = int(sim.tach_missing.sum())
    assert n_missing > 0
    idx = rising_crossings(sim.tach, 0.25)
    assert idx.size == sim.tach_times_s.size - n_missing  # common practice, no source


def test_tach_detector_finds_the_truth_pulses():
    # Integration with dsp.tach: the detector sees the simulated edges at the truth times.
    from dsp.tach import detect_pulses

    fs = 8192.0
    sim = simulate(one_stage(), rpm=1500, duration_s=3.0, fs=fs, seed=43)
    pulses = detect_pulses(sim.tach, fs)
    assert pulses.n_found == sim.tach_times_s.size  # common practice, no source
    assert np.max(np.abs(np.asarray(pulses.times_s) - sim.tach_times_s)) < 1.0 / fs


def test_same_seed_same_data_other_seed_other_data():
    kwargs = dict(rpm=1500, duration_s=1.0, fs=8192.0, speed="fluctuating", speed_variation_pct=3,
                  faults=[Fault("outer-race", "de"), Fault("wear", "mid")])
    a = simulate(two_stage(), seed=7, **kwargs)
    b = simulate(two_stage(), seed=7, **kwargs)
    c = simulate(two_stage(), seed=8, **kwargs)
    np.testing.assert_array_equal(a.data, b.data)  # numpy default_rng is reproducible by seed (numpy docs)
    assert not np.array_equal(a.data, c.data)
    assert a.data.dtype == np.float32 and a.data.shape == (2, 8192)
    assert not a.data.flags.writeable


def test_noise_level_and_clipping():
    train = GearTrain(tach=Tach(shaft="a"), shafts=(Shaft("a"),))  # no gears: shaft 1x and noise only
    sim = simulate(train, rpm=600, duration_s=2.0, fs=8192.0, seed=51, noise_g=0.5)
    x = sim.acceleration_g.astype(np.float64)
    # white noise of RMS 0.5 g plus a 0.03 g shaft line through a path of modest gain
    assert 0.45 < x.std() < 0.9  # common practice, no source
    clipped = simulate(train, rpm=600, duration_s=2.0, fs=8192.0, seed=51, noise_g=0.5, clip_g=0.6)
    assert np.max(np.abs(clipped.acceleration_g)) == pytest.approx(0.6)
    assert np.mean(np.abs(clipped.acceleration_g) >= 0.6 - 1e-6) > 0.05


@pytest.mark.parametrize("fault, words", [
    (Fault("tooth", "nowhere"), "unknown shaft"),
    (Fault("tooth", "s9:in"), "unknown mesh"),
    (Fault("tooth", "mid", tooth=61), "does not exist"),
    (Fault("outer-race", "nope"), "unknown bearing"),
    (Fault("cracked", "in"), "Invalid fault kind"),
    (Fault("wear", "in", severity="awful"), "severity"),
])
def test_bad_faults_raise_one_clear_error(fault, words):
    with pytest.raises(AnalysisError, match=words):
        simulate(two_stage(), rpm=1500, duration_s=0.2, fs=8192.0, faults=[fault])


def test_missing_speed_raises():
    with pytest.raises(GearbenchError, match="rpm"):
        simulate(one_stage().__class__(tach=Tach(shaft="in"), shafts=(Shaft("in"),)), duration_s=0.2, fs=8192.0)
