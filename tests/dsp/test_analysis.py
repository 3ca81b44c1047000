"""``dsp.analysis.analyze`` end to end on small simulated recordings.

The recordings come from ``dsp.synth`` (a few seconds at 12.8 kHz) and are held in
memory as ``dsp.recording.Recording`` objects.  The outside references are the
kinematics of the train (domain reference sec. 1.3), the CWRU bearing multiples
(sec. 2), the simulator's truth (speed, faulted component) and design.md (JSON keys).
"""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pytest

from dsp.analysis import Analysis, Settings, analyze
from dsp.errors import AnalysisError, Cancelled
from dsp.model import Bearing, GearTrain, Mesh, Sensor, Shaft, Tach
from dsp.recording import Recording
from dsp.synth import Fault, simulate

FS = 12800.0
RPM = 1500.0


def train(tach_shaft: str = "in", *, channel: int | None = 1) -> GearTrain:
    # Domain reference sec. 1.3: 1500 rpm input, 20T -> 61T, 18T -> 53T.
    # Bearing: CWRU 6205 drive-end geometry (inches; only d/D matters), n = 9 (sec. 2).
    return GearTrain(
        name="analysis test train",
        sensors=(Sensor("acc", 0, 1.0, "g"),),
        tach=Tach(shaft=tach_shaft, channel=channel, pulses_per_rev=1, nominal_rpm=RPM if channel is None else None),
        shafts=(Shaft("in"), Shaft("mid"), Shaft("out")),
        meshes=(Mesh("s1", "in", 20, "mid", 61), Mesh("s2", "mid", 18, "out", 53)),
        bearings=(Bearing("mid brg", "mid", 9, 0.3126, 1.537, 0.0),),
    )


def recording_of(sim, data=None) -> Recording:
    data = np.array(sim.data if data is None else data, dtype=np.float32)
    data.setflags(write=False)
    return Recording(path="<memory>", sample_rate_hz=sim.fs, n_frames=data.shape[1], n_channels=data.shape[0],
                     duration_s=data.shape[1] / sim.fs, sha256="0" * 64, format="RAW", subtype="FLOAT", data=data)


def run(model=None, *, faults=(), duration_s=6.0, seed=1, rpm=RPM, settings=Settings(), **kw) -> Analysis:
    model = model or train()
    sim = simulate(model, rpm=rpm, duration_s=duration_s, fs=FS, faults=faults, seed=seed, **kw)
    return analyze(recording_of(sim), model, settings)


@pytest.fixture(scope="module")
def healthy() -> Analysis:
    return run()


DESIGN_KEYS = {
    # design.md, "gearbench analyze --json keys"
    "schema": None,
    "recording": {"path", "sha256", "sample_rate_hz", "duration_s", "channels", "sensor"},
    "speed": {"source", "reference_shaft", "mean_hz", "min_hz", "max_hz"},
    "shafts": {"name", "mean_hz", "rpm"},
    "meshes": {"name", "gmf_hz", "hunting_tooth_hz", "assembly_phases"},
    "planetary": {"name", "carrier_hz", "planet_spin_hz", "mesh_hz", "planet_pass_hz"},
    "bearings": {"name", "shaft", "bpfo_hz", "bpfi_hz", "bsf_hz", "ftf_hz"},
    "overall": {"rms", "peak", "crest_factor", "kurtosis", "velocity_rms_mm_s", "clipped"},
    "tsa": {"shaft", "averages", "rms", "kurtosis", "fm0", "fm4", "na4", "m6a", "m8a", "er"},
    "sidebands": {"mesh", "harmonic", "carrier_hz", "owner_shaft", "spacing_hz", "sideband_index",
                  "sideband_level_factor"},
    "envelope": {"band_hz", "band_source", "peaks", "matches"},
    "suspects": {"component", "kind", "score", "evidence"},
    "warnings": None,
}


def test_json_has_every_design_key(healthy):
    d = healthy.to_json_dict()
    text = json.dumps(d, allow_nan=False)  # plain JSON types, no NaN (design.md)
    d = json.loads(text)
    assert d["schema"] == "gearbench.analysis/1"
    for key, inner in DESIGN_KEYS.items():
        assert key in d, key
        if inner is None:
            continue
        items = d[key] if isinstance(d[key], list) else [d[key]]
        for item in items:
            assert inner <= set(item), (key, inner - set(item))
    assert set(d["recording"]["sensor"]) >= {"name", "channel"}
    assert d["speed"]["source"] == "tach"
    assert [t["shaft"] for t in d["tsa"]] == ["in", "mid", "out"]
    assert len(d["sidebands"]) == 2 * 3  # two meshes x n_mesh_harmonics (Settings default 3)


def test_every_shaft_reports_the_registered_tsa_indicators(healthy):
    from dsp.indicators import TSA_KEYS

    for item in healthy.tsa:
        assert tuple(item.indicators) == TSA_KEYS
    assert all(set(TSA_KEYS) <= set(row) for row in healthy.to_json_dict()["tsa"])


def test_speed_and_frequencies_follow_the_tach(healthy):
    # simulator truth: 1500 rpm steady; domain reference sec. 1.3: f2 = 8.19672, f3 = 2.78379 Hz,
    # GMF1 = 500 Hz, GMF2 = 147.541 Hz
    assert healthy.speed.mean_hz * 60 == pytest.approx(RPM, rel=1e-4)
    table = healthy.frequencies
    assert table.shaft_hz("mid") == pytest.approx(8.19672, rel=1e-4)
    assert table.shaft_hz("out") == pytest.approx(2.78379, rel=1e-4)
    assert [m.gmf_hz for m in table.meshes] == pytest.approx([500.0, 147.541], rel=1e-4)
    # averages: whole revolutions of each shaft in 6 s (common practice, no source)
    revs = {t.shaft: t.n_revs for t in healthy.tsa}
    assert revs["in"] == pytest.approx(6 * 25, abs=4)  # less the part before the first pulse
    assert revs["out"] == pytest.approx(6 * 2.78379, abs=2)


def test_overall_levels_match_numpy(healthy):
    # numpy as the reference implementation of RMS and peak
    sim = simulate(train(), rpm=RPM, duration_s=6.0, fs=FS, seed=1)
    x = np.asarray(sim.acceleration_g, dtype=np.float64)
    assert healthy.overall["rms"] == pytest.approx(np.sqrt(np.mean(x**2)), rel=1e-4)
    assert healthy.overall["peak"] == pytest.approx(np.max(np.abs(x)), rel=1e-6)
    assert healthy.overall["clipped"] is False
    assert healthy.overall["velocity_rms_mm_s"] > 0


def test_healthy_gearbox_has_no_suspect(healthy):
    assert healthy.suspects == ()  # simulator truth: no fault
    assert healthy.warnings == ()
    for t in healthy.tsa[:2]:
        # Stewart 1977: FM4 of a healthy gear is about 3 (scatter: common practice, no source)
        assert 2.0 < t.indicators["fm4"] < 5.0


def test_healthy_planetary_stage_has_no_suspect():
    # Z_r = N_p Z_s: the sun's rate relative to the carrier equals the planet-pass frequency,
    # whose sidebands every healthy planetary stage shows (McFadden & Smith 1985)
    from dsp.model import Planetary

    model = GearTrain(name="planetary", sensors=(Sensor("acc", 0, 9.80665, "m/s2"),),
                      tach=Tach(shaft="sun", channel=1), shafts=(Shaft("sun"), Shaft("carrier")),
                      planetary=(Planetary("p1", "sun", 20, 30, 4, 80, "carrier"),))
    a = run(model, seed=2)
    assert a.suspects == ()  # simulator truth: healthy
    fam = next(f for f in a.sidebands if f.harmonic == 1)
    assert fam.owner_shaft == "carrier" and fam.expected
    assert a.overall["velocity_rms_mm_s"] > 0  # m/s2 units integrate too


def owner_of(a: Analysis, mesh: str, harmonic: int = 1) -> str | None:
    return next(f.owner_shaft for f in a.sidebands if f.mesh == mesh and f.harmonic == harmonic)


@pytest.mark.parametrize("tach_shaft", ["in", "out"])
def test_sideband_owner_is_the_eccentric_shaft(tach_shaft):
    # Randall 2011: eccentricity modulates the mesh at its shaft's rate; the tach may sit on any shaft
    model = train(tach_shaft)
    rpm = RPM if tach_shaft == "in" else RPM * 20 / 61 * 18 / 53
    a = run(model, rpm=rpm, faults=(Fault("eccentricity", "mid", severity="severe"),), seed=2)
    assert a.speed.shaft == tach_shaft
    assert owner_of(a, "s1") == "mid"
    assert owner_of(a, "s2") == "mid"
    assert a.suspects and a.suspects[0].component == "shaft:mid"
    assert a.suspects[0].kind == "distributed wear or eccentricity"


def test_sideband_owner_with_wandering_speed():
    # +-8 % slow wander: the order spectrum keeps the family sharp (Fyfe & Munck 1997)
    a = run(faults=(Fault("eccentricity", "in", severity="severe"),), speed="fluctuating",
            speed_variation_pct=8.0, seed=3)
    assert (a.speed.max_hz - a.speed.min_hz) / a.speed.mean_hz > 0.1  # simulator truth: +-8 %
    assert owner_of(a, "s1") == "in"
    assert any("speed spread" in w for w in a.warnings)


def test_localized_tooth_fault_ranks_its_shaft_first():
    a = run(faults=(Fault("tooth", "s1:mid", tooth=12, severity="severe"),), seed=4)
    assert a.suspects[0].component == "shaft:mid"  # simulator truth
    assert a.suspects[0].kind == "localized tooth damage"
    mid = a.tsa_for("mid")
    assert mid.indicators["fm4"] > 9  # Stewart 1977: FM4 rises far above 3 with local damage
    assert a.tsa_for("in").indicators["fm4"] < 5
    # the damage sits at tooth 12 of 61: (12 + 0.5) / 61 rev = 73.8 deg (synth convention)
    peak_deg = mid.angle_deg[np.argmax(np.abs(mid.difference))]
    assert abs((peak_deg - 73.77 + 180) % 360 - 180) < 360 / 61 * 1.5


@pytest.mark.parametrize("kind,label,multiple", [("outer-race", "BPFO", 3.5848), ("inner-race", "BPFI", 5.4152)])
def test_bearing_fault_names_the_bearing_and_race(kind, label, multiple):
    a = run(faults=(Fault(kind, "mid brg", severity="mild"),), seed=5)
    top = a.suspects[0]
    assert top.component == "bearing:mid brg"  # simulator truth
    assert top.kind == f"bearing {kind.replace('-', ' ')}"
    assert [s.component for s in a.suspects] == ["bearing:mid brg"]
    m = next(m for m in a.envelope_matches if m.component == "bearing:mid brg" and m.label == label)
    found = [h.found_hz for h in m.hits if h.clear]
    # CWRU 6205: BPFO 3.5848 and BPFI 5.4152 x running speed; the simulated 1 % slip lies
    # within the 1-2 % of Randall & Antoni 2011
    assert found[0] == pytest.approx(multiple * 8.19672, rel=0.02)
    assert m.n_clear >= 3


def test_bearing_fault_found_while_the_speed_wanders():
    # +-8 % wander smears BPFO in the Hz envelope spectrum; order tracking first
    # (Randall & Antoni 2011, recommended procedure) keeps the family together
    a = run(faults=(Fault("outer-race", "mid brg", severity="severe"),), speed="fluctuating",
            speed_variation_pct=8.0, seed=8)
    assert a.extras["envelope_order_tracked"] is not None
    assert a.suspects[0].component == "bearing:mid brg"  # simulator truth
    assert a.suspects[0].kind == "bearing outer race"


def test_chunked_order_spectrum_matches_the_whole_record(monkeypatch):
    # a long record is cut into power-averaged chunks; a steady line keeps its amplitude
    # (reference: dsp.orders.order_spectrum of the whole record; Welch 1967 averaging)
    import dsp.analysis as analysis_module
    from dsp.orders import order_spectrum
    from dsp.tach import detect_pulses, speed_profile

    model = train()
    sim = simulate(model, rpm=RPM, duration_s=6.0, fs=4096.0, seed=9, speed="fluctuating", speed_variation_pct=3.0)
    x = np.asarray(sim.acceleration_g)
    profile = speed_profile(detect_pulses(sim.tach, sim.fs), "in")
    whole = order_spectrum(x, sim.fs, profile, max_order=45.0)
    monkeypatch.setattr(analysis_module, "ORDER_SEGMENT_REVS", 24)
    chunked = analysis_module._order_spectrum(x, sim.fs, profile, 45.0)
    assert chunked.n_averages > 3
    for order in (20.0, 40.0):  # GMF of s1 and its second harmonic (domain reference sec. 1.3)
        a_whole = whole.amplitude[np.argmin(np.abs(whole.order - order))]
        a_chunk = chunked.amplitude[np.argmin(np.abs(chunked.order - order))]
        assert a_chunk == pytest.approx(a_whole, rel=0.05)


def test_nan_samples_give_a_warning_and_results():
    model = train()
    sim = simulate(model, rpm=RPM, duration_s=6.0, fs=FS, seed=1)
    data = np.array(sim.data)
    data[0, 1000:1010] = np.nan
    data[0, 5000] = np.inf
    a = analyze(recording_of(sim, data), model)
    assert any("NaN or infinite" in w for w in a.warnings)
    assert len(a.tsa) == 3 and math.isfinite(a.overall["rms"])
    # a recording that is mostly NaN fails with a clear message
    data[0, : data.shape[1] // 2] = np.nan
    with pytest.raises(AnalysisError, match="NaN or infinite.*repair"):
        analyze(recording_of(sim, data), model)


def test_short_record_skips_slow_shaft_tsa_with_a_warning():
    # 0.9 s: "out" turns 2.5 times (< 3), the other shafts more
    a = run(duration_s=0.9)
    assert [t.shaft for t in a.tsa] == ["in", "mid"]
    assert any(w.startswith("short record: shaft out") for w in a.warnings)
    assert a.spectrum is not None and a.envelope is not None


def test_missing_tach_pulses_are_repaired_with_a_warning():
    a = run(missing_tach_pct=5.0, seed=6)
    assert a.tach.n_repaired > 0  # simulator truth: 5 % of the pulses left out
    assert any(w.startswith("tach repaired") for w in a.warnings)
    assert a.speed.mean_hz * 60 == pytest.approx(RPM, rel=1e-3)


def test_clipping_is_reported():
    a = run(clip_g=0.4)
    assert a.overall["clipped"] is True
    assert any(w.startswith("clipping invalidates kurtosis") for w in a.warnings)


def test_without_tach_uses_the_nominal_speed():
    model = train(channel=None)
    a = run(model)
    assert a.speed.source in ("nominal", "estimated")
    assert a.speed.mean_hz * 60 == pytest.approx(RPM, rel=0.01)  # simulator truth
    assert a.to_json_dict()["speed"]["source"] in ("nominal", "estimated")


def test_low_sample_rate_warns_about_mesh_harmonics():
    model = train()
    sim = simulate(model, rpm=RPM, duration_s=4.0, fs=2048.0, seed=1)
    a = analyze(recording_of(sim), model)
    # 1024 Hz Nyquist reaches only harmonic 2 of the 500 Hz GMF
    assert any("sample rate too low" in w and "s1" in w for w in a.warnings)


def test_progress_and_cancel():
    model = train()
    sim = simulate(model, rpm=RPM, duration_s=2.0, fs=FS, seed=1)
    rec = recording_of(sim)
    seen: list[float] = []
    analyze(rec, model, Settings(), progress=lambda f, text: seen.append(f))
    assert seen[0] == 0.0 and seen[-1] == 1.0
    assert all(b >= a for a, b in zip(seen, seen[1:]))
    calls = []

    def cancel():
        calls.append(1)
        return len(calls) > 2

    with pytest.raises(Cancelled):
        analyze(rec, model, Settings(), cancel=cancel)
    assert len(calls) == 3


def test_settings_are_used_and_inputs_untouched():
    model = train()
    sim = simulate(model, rpm=RPM, duration_s=4.0, fs=FS, seed=1)
    rec = recording_of(sim)
    before = rec.data.copy()
    s = Settings(t_start_s=1.0, t_end_s=3.0, envelope_band_hz=(2000.0, 4000.0), window="flattop")
    a = analyze(rec, model, s)
    np.testing.assert_array_equal(rec.data, before)
    assert a.settings is s
    assert a.envelope.band_source == "user"
    assert a.envelope.band_hz[0] == pytest.approx(2000.0, abs=1.0)
    assert a.spectrum.window == "flattop"
    assert a.recording["t_end_s"] - a.recording["t_start_s"] == pytest.approx(2.0, abs=1e-3)
    with pytest.raises(AnalysisError, match="sensor index 3"):
        analyze(rec, model, dataclasses.replace(s, sensor_index=3))


def test_averaged_spectrum_follows_the_resolution_setting(healthy):
    """extras["averaged_spectrum"]: the Hz spectrum with settings.spectrum_resolution_hz line spacing."""
    b = healthy.extras["averaged_spectrum"]
    # 6 s record: full-resolution lines 1/6 Hz apart, so 0.5 Hz is 3 lines per averaged line
    assert b.resolution_hz == pytest.approx(0.5, rel=1e-9) and b.average == "band"
    sim = simulate(train(), rpm=RPM, duration_s=6.0, fs=FS, seed=1)
    x = np.asarray(sim.acceleration_g, dtype=np.float64)
    # Parseval (numpy as the reference): the band lines hold the power of the record without its mean
    from dsp.spectrum import band_rms

    assert band_rms(b, 0.0, FS / 2) == pytest.approx(np.std(x), rel=0.02)
    coarse = run(settings=Settings(spectrum_resolution_hz=2.0))
    assert coarse.extras["averaged_spectrum"].resolution_hz == pytest.approx(2.0, rel=1e-9)
    with pytest.raises(AnalysisError, match="spectrum_resolution_hz"):
        run(duration_s=2.0, settings=Settings(spectrum_resolution_hz=0.0))


def test_overall_moments_in_one_pass_match_scipy():
    """The one-pass block merge of the overall levels (several blocks, a large mean) against scipy/numpy."""
    import scipy.stats

    from dsp.analysis import _overall

    rng = np.random.default_rng(41)
    x = (5.0 + rng.standard_t(5, 300_001)).astype(np.float32)     # heavy tails, offset: kurtosis well above 3
    q = type("Q", (), {"clipped": False, "clipped_fraction": 0.0})()
    o = _overall(x, 1.0, q)
    xd = x.astype(np.float64)
    # scipy.stats.kurtosis (Pearson, fisher=False) and numpy as reference implementations
    assert o["kurtosis"] == pytest.approx(scipy.stats.kurtosis(xd, fisher=False), rel=1e-9)
    assert o["rms"] == pytest.approx(np.sqrt(np.mean(xd**2)), rel=1e-12)
    assert o["peak"] == pytest.approx(np.max(np.abs(xd)), rel=1e-12)
